"""The measures part of the demo (issue 17 item 5): the class 3-5 demo steps get protective
measures in different states; one barrier fails its check (the relief of the nitro
reduction is far too small) and the endorsement of the Varnholt reduction waits until its
condenser is proven. Idempotent: a measure of a kind already on its step is left alone."""

from __future__ import annotations

import datetime as dt

from django.contrib.auth import get_user_model

from hazards.models import Measure, ReactionStep
from hazards.services.measures import measure_create

C = 273.15

# (process name, step sequence) -> measures; SI values.
MEASURES = {
    ("QX-17 amide intermediate", 2): [
        dict(
            kind="evaporative_cooling",
            acts_on="reflux condenser E-102 on R-101",
            status="proven",
            evidence_reference="QX17-TR-031 condenser capacity test",
            test_date=dt.date(2026, 10, 2),
            due_date=dt.date(2026, 10, 15),
            condenser_ua_w_per_k=9000.0,
            coolant_inlet_temperature_k=10 + C,
            coolant_outlet_temperature_k=20 + C,
            vapour_line_diameter_m=0.2,
            latent_heat_j_per_kg=1.10e6,
            vapour_molar_mass_kg_per_mol=0.03204,
            liquid_density_kg_per_m3=750.0,
            synthesis_activation_energy_j_per_mol=60e3,
            description="Methanol boils at MTT; the condenser takes the vapour.",
        ),
    ],
    ("Varnholt nitro-aromatic reduction", 1): [
        dict(
            kind="evaporative_cooling",
            acts_on="reflux condenser E-205 on R-204",
            status="in_place",
            due_date=dt.date(2027, 2, 28),
            condenser_ua_w_per_k=30000.0,
            coolant_inlet_temperature_k=5 + C,
            coolant_outlet_temperature_k=15 + C,
            vapour_line_diameter_m=0.45,
            latent_heat_j_per_kg=3.6e5,
            vapour_molar_mass_kg_per_mol=0.09214,
            liquid_density_kg_per_m3=780.0,
            synthesis_activation_energy_j_per_mol=30e3,
            description="Installed; the capacity test at full reflux is still to be run.",
        ),
        dict(
            kind="emergency_relief",
            acts_on="bursting disc BD-204 to catch tank",
            status="in_place",
            due_date=dt.date(2026, 11, 30),
            set_pressure_pa=3e5,
            vent_area_m2=0.002,
            discharge_coefficient=0.8,
            relief_system="hybrid",
            vessel_volume_m3=10.0,
            latent_heat_j_per_kg=3.6e5,
            vapour_molar_mass_kg_per_mol=0.09214,
            liquid_density_kg_per_m3=780.0,
            synthesis_activation_energy_j_per_mol=30e3,
            description="DN50 disc from an older duty; the screening finds it too small.",
        ),
        dict(
            kind="feed_interlock",
            acts_on="formate feed valve XV-211",
            status="in_place",
            due_date=dt.date(2027, 1, 15),
            trip_temperature_k=58 + C,
            response_time_s=30.0,
            synthesis_activation_energy_j_per_mol=30e3,
        ),
    ],
    ("Varnholt nitro-aromatic reduction", 2): [
        dict(
            kind="quench",
            acts_on="cold water quench from tank T-12 into R-310",
            status="in_place",
            due_date=dt.date(2026, 11, 20),
            response_time_s=300.0,
        ),
        dict(
            kind="dump",
            acts_on="dump valve to catch vessel D-7",
            status="proposed",
            due_date=dt.date(2027, 4, 30),
            response_time_s=600.0,
        ),
    ],
    ("Peroxide-cured binder PB-9", 2): [
        dict(
            kind="feed_interlock",
            acts_on="peroxide feed pump P-31",
            status="proven",
            evidence_reference="PB9-SIL-007 interlock proof test",
            test_date=dt.date(2026, 8, 19),
            due_date=dt.date(2026, 9, 1),
            trip_temperature_k=38 + C,
            response_time_s=20.0,
        ),
        dict(
            kind="inhibitor_injection",
            acts_on="inhibitor pot IP-3 on R-310",
            status="proposed",
            due_date=dt.date(2027, 5, 31),
            response_time_s=120.0,
        ),
    ],
}


def load_measures_demo() -> int:
    owner = get_user_model().objects.get(username="author")
    added = 0
    for (process_name, sequence), rows in MEASURES.items():
        step = ReactionStep.objects.filter(
            process__name=process_name, process__site__code="varnholt", sequence=sequence
        ).first()
        if step is None:
            continue
        for row in rows:
            if Measure.objects.filter(step=step, kind=row["kind"]).exists():
                continue
            measure_create(step=step, data={**row, "owner": owner})
            added += 1
    return added
