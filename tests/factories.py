"""factory_boy factories for the records; values are SI, as stored."""

from __future__ import annotations

import factory

from hazards import models as m


class SiteFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = m.Site
        django_get_or_create = ("code",)

    code = factory.Sequence(lambda n: f"site-{n}")
    name = factory.Sequence(lambda n: f"Test works {n}")


class ProcessFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = m.Process

    name = factory.Sequence(lambda n: f"Process {n}")
    site = factory.SubFactory(SiteFactory)


class SolventFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = m.Solvent
        django_get_or_create = ("cas_number",)

    name = "Toluene"
    cas_number = "108-88-3"


class VesselFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = m.Vessel

    name = "Test reactor"
    tag = factory.Sequence(lambda n: f"T-{n:03d}")
    volume_m3 = 6.3
    heat_transfer_area_m2 = 12.0
    heat_transfer_coefficient_w_per_m2_k = 350.0
    coolant_temperature_k = 283.15
    design_pressure_pa = 7e5
    relief_set_pressure_pa = 6e5
    headspace_volume_m3 = 1.5


class StepFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = m.ReactionStep

    process = factory.SubFactory(ProcessFactory)
    sequence = factory.Sequence(lambda n: n + 1)
    name = factory.Sequence(lambda n: f"Step {n}")
    operation_mode = "batch"
    process_temperature_k = 303.15
    reaction_mass_kg = 5000.0
    specific_heat_capacity_j_per_kg_k = 2000.0
    system = "open"
    operating_pressure_pa = 101325.0
    solvent = factory.SubFactory(SolventFactory)
    vessel = factory.SubFactory(VesselFactory)


class CalorimetryRunFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = m.CalorimetryRun

    step = factory.SubFactory(StepFactory)
    instrument = "Heat-flow calorimeter"
    specific_reaction_heat_j_per_kg = 120e3
    max_accumulation = 0.2
    max_heat_release_rate_w_per_kg = 20.0
    gas_release_mol_per_kg = 0.0


class DecompositionTestFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = m.DecompositionTest

    step = factory.SubFactory(StepFactory)
    method = "dsc"
    onset_temperature_k = 523.15
    decomposition_energy_j_per_kg = 400e3
    heating_rate_k_per_s = 4 / 60
