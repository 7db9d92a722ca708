"""The demo scenario: an invented company, its site, processes, vessels and measurements.

Quillmere Speciality Chemicals and its Varnholt works are fictitious; so are the products.
Solvent property data are real (CAS numbers; vapour pressures from the `chemicals` library).
The steps are chosen so that their indicators span all five criticality classes, plus one
step without decomposition data, whose class cannot be assigned.
"""

from __future__ import annotations

import datetime as dt
import os
import secrets
from pathlib import Path

from django.contrib.auth import get_user_model
from django.contrib.auth.models import Group, Permission
from django.db import transaction

from hazards.db import data_dir
from hazards.measures_demo import load_measures_demo
from hazards.models import (
    CalorimetryRun,
    DecompositionPeak,
    DecompositionTest,
    Process,
    ReactionStep,
    Site,
    Solvent,
    Vessel,
)
from hazards.oversight.demo import load_oversight_demo
from hazards.review.demo import load_review_demo
from hazards.services.indicators import flush_pending
from hazards.whatif.demo import load_whatif_demo

ROLES = ("author", "reviewer", "approver", "auditor", "admin")
C = 273.15  # °C -> K
BAR = 1e5
ATM = 101325.0

SOLVENTS = [
    ("Toluene", "108-88-3"),
    ("Methanol", "67-56-1"),
    ("Water", "7732-18-5"),
    ("Acetone", "67-64-1"),
]

VESSELS = [
    # tag, name, volume m3, area m2, U W/m2K, coolant °C, design bar a, relief bar a, headspace m3
    ("R-101", "Glass-lined reactor, bay 1", 6.3, 14.0, 320.0, 5.0, 7.0, 6.0, 1.8),
    ("R-204", "Stainless reactor, bay 2", 10.0, 19.5, 410.0, -5.0, 11.0, 9.0, 3.0),
    ("R-310", "Hastelloy pressure reactor, bay 3", 4.0, 9.8, 360.0, 10.0, 26.0, 21.0, 1.2),
]

PROCESSES = [
    ("QX-17 amide intermediate", "Three-step route to the QX-17 amide used in coatings resins."),
    ("Varnholt nitro-aromatic reduction", "Hydrogen-free reduction sequence for VN-3 aniline."),
    ("Peroxide-cured binder PB-9", "Esterification and peroxide cure of the PB-9 binder."),
]

# One dict per step. Temperatures °C, heats kJ/kg, cp kJ/(kg K), pressures bar absolute.
STEPS = [
    # class 1: MTSR < MTT < TD24
    dict(process=0, seq=1, name="Amide coupling in toluene", mode="batch", tp=40, mass=4200,
         cp=1.9, system="open", p=ATM / BAR, solvent="108-88-3", vessel="R-101",
         heat=55, acc=None, rate=18, gas=0.0,
         decomp=dict(method="dsc", onset=255, energy=310, rate_k_min=4)),
    # class 3: MTT < MTSR < TD24
    dict(process=0, seq=2, name="Methanolysis of the ester", mode="semi_batch", tp=45,
         mass=3600, cp=2.4, system="open", p=ATM / BAR, solvent="67-56-1", vessel="R-101",
         dosing_min=120, heat=190, acc=0.42, rate=24, gas=0.0,
         decomp=dict(method="dsc", onset=300, energy=420, rate_k_min=4)),
    # class 2: MTSR < TD24 < MTT (water at 3 bar absolute)
    dict(process=0, seq=3, name="Aqueous hydrolysis under pressure", mode="batch", tp=60,
         mass=5100, cp=3.6, system="open", p=3.01325, solvent="7732-18-5", vessel="R-204",
         heat=100, acc=None, rate=12, gas=0.0,
         decomp=dict(method="dsc", onset=230, energy=520, rate_k_min=4,
                     ea=100.0, tref=180.0, qref=50.0)),
    # class 4: MTT < TD24 < MTSR
    dict(process=1, seq=1, name="Nitro reduction with formate", mode="semi_batch", tp=50,
         mass=6800, cp=1.8, system="open", p=ATM / BAR, solvent="108-88-3", vessel="R-204",
         dosing_min=240, heat=340, acc=0.55, rate=31, gas=1.2,
         decomp=dict(method="dsc", onset=260, energy=900, rate_k_min=4)),
    # class 5: TD24 < MTSR < MTT (closed vessel to relief)
    dict(process=1, seq=2, name="Diazotisation hold", mode="batch", tp=35, mass=2500,
         cp=2.8, system="closed", p=ATM / BAR, solvent="7732-18-5", vessel="R-310",
         heat=260, acc=None, rate=40, gas=0.3,
         decomp=dict(method="adiabatic", onset=75, energy=1100, phi=1.9,
                     ea=95.0, tref=90.0, qref=2.5)),
    # no decomposition data: class cannot be assigned
    dict(process=1, seq=3, name="Work-up and phase split", mode="batch", tp=25, mass=6000,
         cp=3.2, system="open", p=ATM / BAR, solvent="7732-18-5", vessel="R-204",
         heat=8, acc=None, rate=1.5, gas=0.0, decomp=None),
    # class 1, semi-batch, well controlled
    dict(process=2, seq=1, name="Esterification with acid dosing", mode="semi_batch", tp=70,
         mass=5400, cp=2.1, system="open", p=ATM / BAR, solvent="108-88-3", vessel="R-101",
         dosing_min=180, heat=80, acc=0.12, rate=9, gas=0.0,
         decomp=dict(method="dsc", onset=290, energy=380, rate_k_min=4,
                     peaks=[(1, 301.2), (2, 309.8), (5, 321.5), (10, 331.0)])),
    # class 5: peroxide cure, TD24 below MTSR
    dict(process=2, seq=2, name="Peroxide cure in acetone", mode="semi_batch", tp=30,
         mass=3000, cp=2.2, system="open", p=ATM / BAR, solvent="67-64-1", vessel="R-310",
         dosing_min=90, heat=420, acc=0.6, rate=55, gas=0.8,
         decomp=dict(method="dsc", onset=95, energy=1350, rate_k_min=4)),
]


def demo_password() -> tuple[str, bool]:
    """The demo users' password: EXOLEDGER_DEMO_PASSWORD, else one generated once and kept."""
    from_env = os.environ.get("EXOLEDGER_DEMO_PASSWORD")
    if from_env:
        return from_env, False
    path: Path = data_dir() / "demo-password.txt"
    if path.exists():
        return path.read_text().strip(), False
    path.parent.mkdir(parents=True, exist_ok=True)
    password = secrets.token_urlsafe(12)
    path.write_text(password + "\n")
    path.chmod(0o600)
    return password, True


def _users(password: str) -> None:
    User = get_user_model()
    perms = {
        "author": ["add_measure", "change_measure", "delete_measure",
                   "add_reactionstep", "change_reactionstep", "add_calorimetryrun",
                   "change_calorimetryrun", "delete_calorimetryrun", "add_decompositiontest",
                   "change_decompositiontest", "delete_decompositiontest",
                   "add_decompositionpeak", "change_decompositionpeak",
                   "delete_decompositionpeak", "add_calorimetryseries",
                   "change_calorimetryseries", "add_decompositioncurve", "add_process",
                   "change_process"],
        "reviewer": [], "approver": [], "auditor": [], "admin": [],
    }
    names = {"author": "Ada Demo-Author", "reviewer": "Rui Demo-Reviewer",
             "approver": "Pia Demo-Approver", "auditor": "Aurel Demo-Auditor",
             "admin": "Adi Demo-Admin"}
    for role in ROLES:
        group, _ = Group.objects.get_or_create(name=role)
        group.permissions.set(Permission.objects.filter(codename__in=perms[role]))
        user, _ = User.objects.get_or_create(username=role)
        first, last = names[role].split(" ", 1)
        user.first_name, user.last_name = first, last
        user.email = f"{role}@quillmere.example"
        user.is_staff = role == "admin"
        user.is_superuser = role == "admin"
        user.set_password(password)
        user.save()
        user.groups.set([group])


@transaction.atomic
def load_demo() -> dict:
    """Create or update the demo scenario; running it twice changes nothing."""
    password, generated = demo_password()
    _users(password)
    site, _ = Site.objects.update_or_create(
        code="varnholt", defaults={"name": "Quillmere Speciality Chemicals, Varnholt works"}
    )
    solvents = {
        cas: Solvent.objects.update_or_create(cas_number=cas, defaults={"name": name})[0]
        for name, cas in SOLVENTS
    }
    vessels = {}
    for tag, name, vol, area, u, tc, pd, pr, head in VESSELS:
        vessels[tag] = Vessel.objects.update_or_create(
            tag=tag,
            defaults=dict(name=name, volume_m3=vol, heat_transfer_area_m2=area,
                          heat_transfer_coefficient_w_per_m2_k=u, coolant_temperature_k=tc + C,
                          design_pressure_pa=pd * BAR, relief_set_pressure_pa=pr * BAR,
                          headspace_volume_m3=head),
        )[0]

    owner = get_user_model().objects.get(username="author")
    processes = [
        Process.objects.update_or_create(
            site=site, name=name, defaults={"description": text, "owner": owner}
        )[0]
        for name, text in PROCESSES
    ]
    day = dt.date(2026, 9, 14)
    for i, row in enumerate(STEPS):
        step, _ = ReactionStep.objects.update_or_create(
            process=processes[row["process"]],
            sequence=row["seq"],
            defaults=dict(
                name=row["name"], operation_mode=row["mode"],
                process_temperature_k=row["tp"] + C, reaction_mass_kg=row["mass"],
                specific_heat_capacity_j_per_kg_k=row["cp"] * 1000, system=row["system"],
                operating_pressure_pa=row["p"] * BAR, solvent=solvents[row["solvent"]],
                vessel=vessels[row["vessel"]],
                dosing_time_s=row.get("dosing_min") and row["dosing_min"] * 60.0,
            ),
        )
        CalorimetryRun.objects.update_or_create(
            step=step, instrument="RC-lab heat-flow calorimeter 2",
            defaults=dict(
                run_date=day + dt.timedelta(days=3 * i), lab_scale_kg=0.8,
                specific_reaction_heat_j_per_kg=row["heat"] * 1000.0,
                max_accumulation=row["acc"], max_heat_release_rate_w_per_kg=row["rate"],
                gas_release_mol_per_kg=row["gas"],
            ),
        )
        d = row["decomp"]
        if d is None:
            continue
        test, _ = DecompositionTest.objects.update_or_create(
            step=step, method=d["method"],
            defaults=dict(
                test_date=day + dt.timedelta(days=3 * i + 1),
                instrument="DSC cell B" if d["method"] == "dsc" else "Adiabatic test cell A",
                sample_mass_kg=4e-6 if d["method"] == "dsc" else 5e-3,
                heating_rate_k_per_s=d.get("rate_k_min", 0) / 60.0 or None,
                crucible="gold-plated high-pressure" if d["method"] == "dsc" else "titanium bomb",
                onset_temperature_k=d["onset"] + C,
                decomposition_energy_j_per_kg=d["energy"] * 1000.0,
                activation_energy_j_per_mol=d.get("ea") and d["ea"] * 1000.0,
                reference_temperature_k=d.get("tref") and d["tref"] + C,
                heat_release_rate_at_reference_w_per_kg=d.get("qref"),
                phi_factor=d.get("phi"),
            ),
        )
        for beta_k_min, peak_c in d.get("peaks", []):
            DecompositionPeak.objects.update_or_create(
                test=test, heating_rate_k_per_s=beta_k_min / 60.0,
                defaults={"peak_temperature_k": peak_c + C},
            )

    load_whatif_demo()
    flush_pending()
    load_measures_demo()

    load_review_demo(password)

    load_oversight_demo()
    return {"password": password, "generated": generated, "users": ROLES}
