"""Decomposition curves in a signed revision's content and in its dossier PDF, read back.

Scans from the extended Prout–Tompkins law (tests/calcs/decomposition_data.py, parameters
chosen there), 2.0 mg, 800 J/g; an adiabatic run from first-order kinetics at φ = 2
(tests/api/test_adiabatic_curves.py).
"""

from __future__ import annotations

import json

import pytest

from hazards.dossier.services import dossier_render, dossier_request
from hazards.models import DecompositionTest
from hazards.review.services import revisions as rv
from hazards.review.services.roles import role_grant
from hazards.services.curves_store import curve_attach
from tests.api.test_adiabatic_curves import arc_file
from tests.api.test_decomposition_curves import csv_scan
from tests.calcs.decomposition_data import RATES_K_PER_MIN
from tests.conftest import PASSWORD
from tests.dossier.helpers import attachments, page_texts
from tests.factories import CalorimetryRunFactory, ProcessFactory, SiteFactory, StepFactory

pytestmark = pytest.mark.django_db


def _section(texts: list[str], heading: str, following: str) -> str:
    """The text of a step's pages: from the page with its heading to the next section."""
    start = next(i for i, t in enumerate(texts) if t.startswith(heading))
    out = []
    for i, t in enumerate(texts[start:]):
        if i and following in t:
            out.append(t.split(following)[0])
            break
        out.append(t)
    return " ".join(out)


def test_the_revision_names_the_curves_and_the_dossier_prints_their_evidence(people):
    process = ProcessFactory(
        name="Nitro residue distillation", site=SiteFactory(code="varnholt", name="Varnholt works")
    )
    tests = []
    for seq, method in ((1, "dsc"), (2, "adiabatic")):
        step = StepFactory(
            process=process,
            sequence=seq,
            name=f"Step {seq} {method}",
            specific_heat_capacity_j_per_kg_k=2000.0,
        )
        CalorimetryRunFactory(step=step, is_basis=True)
        tests.append(DecompositionTest.objects.create(step=step, method=method, is_basis=True))
    for beta in RATES_K_PER_MIN:
        curve_attach(
            test=tests[0], file_name=f"scan-{beta:g}.csv", raw=csv_scan(beta), sample_mass_kg=2e-6
        )
    raw, _, _ = arc_file(3001)
    curve_attach(
        test=tests[1],
        file_name="arc-run.csv",
        raw=raw,
        sample_mass_kg=5e-3,
        phi_factor=2.0,
        free_volume_m3=1e-5,
    )
    # a submitted revision (step 2 is class 5: its endorsement would need measures)
    for role, user in people.items():
        role_grant(process=process, user=user, role=role, granted_by=None, reason="set-up")
    revision = rv.revision_open(process=process, user=people["author"], reason="first issue")
    rv.revision_submit(revision=revision, user=people["author"], password=PASSWORD, request=None)
    revision.refresh_from_db()

    # the revision's frozen content names the model, its parameters and the files' SHA-256
    frozen = {t["id"]: t for s in revision.content["steps"] for t in s["decomposition_tests"]}
    dsc, arc = frozen[tests[0].pk], frozen[tests[1].pk]
    shas = [c.sha256 for c in tests[0].curves.order_by("id")]
    assert [c["sha256"] for c in dsc["curves"]] == shas
    assert dsc["kinetics"]["model"] == "autocatalytic"
    assert dsc["kinetics"]["files_sha256"] == shas
    assert len(dsc["kinetics"]["parameters"]) == 4
    assert arc["curves"][0]["phi_factor"] == 2.0
    assert (
        arc["curves"][0]["derived"]["corrected"]["onset_k"] < arc["curves"][0]["derived"]["onset_k"]
    )

    dossier, _ = dossier_request(process=process, enqueue=False)
    dossier = dossier_render(dossier_id=dossier.pk, sandbox=False)
    assert dossier.status == "done", dossier.error
    pdf = bytes(dossier.pdf)
    context = json.loads(attachments(pdf)["dossier-context.json"])
    evidence = context["decomposition"][str(tests[0].step_id)]
    assert [c["sha256"] for c in evidence["curves"]] == shas
    assert len(evidence["scans"]) == 4 and len(evidence["scans"][0]["temperature_k"]) <= 401
    assert context["decomposition"][str(tests[1].step_id)]["runs"][0]["phi"] == 2.0

    texts = page_texts(pdf)
    first = _section(texts, "Step 1. Step 1 dsc", "Step 2. Step 2 adiabatic")
    assert "Decomposition evidence from the measured curves" in first
    assert "DSC scans, baselines and fitted model" in first
    assert "Activation energy against conversion" in first
    assert "TMRad against initial temperature" in first
    assert "Kinetic model: autocatalytic" in first
    assert "scan-5.csv" in first and shas[2][:12] in first.replace(" ", "")
    assert "leave-one-scan-out jackknife" in first
    second = _section(texts, "Step 2. Step 2 adiabatic", "References")
    assert "Adiabatic runs: self-heat rate" in second
    assert "φ-corrected onset" in second and "arc-run.csv" in second
