"""The permission matrix: every persona against every action and endpoint, on a process
where they hold their role ("own") and on one where they hold none ("other").

Each attempt runs inside a savepoint that is rolled back, so every cell starts from the
same world. List endpoints count as 200 when the record is listed and 404 when it is not.
"""

from __future__ import annotations

from dataclasses import dataclass

import pytest
from django.db import transaction

from hazards.api.concurrency import content_etag, etag_for
from hazards.api.review_serializers import FindingSerializer
from hazards.models import CalorimetryRun, Process, ReactionStep, Vessel
from hazards.review.models import Finding, ProcessRevision
from tests.conftest import PASSWORD, make_user
from tests.review.conftest import AUTHOR_PERMS, client_for
from tests.review.factories import FindingFactory, assessed_process, revision_in

PERSONAS = ("author", "reviewer", "approver", "auditor", "outsider", "admin")


@dataclass
class Side:
    """One set of processes (fresh, drafting, lodged, checked) and a finding."""

    fresh: Process
    draft: ProcessRevision
    lodged: ProcessRevision
    checked: ProcessRevision
    finding: Finding

    @property
    def process(self) -> Process:
        return self.draft.process

    @property
    def step(self) -> ReactionStep:
        return ReactionStep.objects.get(process=self.process)


def build_side(author, reviewer, approver, auditor) -> Side:
    def new():
        return assessed_process(author=author, reviewer=reviewer, approver=approver,
                                auditor=auditor)

    fresh, p_draft, p_lodged, p_checked = new(), new(), new(), new()
    return Side(
        fresh=fresh,
        draft=revision_in(p_draft, "drafting", author=author),
        lodged=revision_in(p_lodged, "lodged", author=author),
        checked=revision_in(p_checked, "checked", author=author, reviewer=reviewer),
        finding=FindingFactory(process=p_draft, owner=author, raised_by=reviewer,
                               kind="advisory"),
    )


@pytest.fixture
def world(db, author, reviewer, approver, auditor, outsider, admin_user):
    others = [make_user(f"other-{r}", perms=AUTHOR_PERMS if r == "author" else ())
              for r in ("author", "reviewer", "approver", "auditor")]
    people = {"author": author, "reviewer": reviewer, "approver": approver,
              "auditor": auditor, "outsider": outsider, "admin": admin_user}
    return {
        "clients": {name: client_for(user) for name, user in people.items()},
        "people": {"author": author, "reviewer": reviewer, "approver": approver,
                   "auditor": auditor, "outsider": outsider, "admin": admin_user},
        "own": build_side(author, reviewer, approver, auditor),
        "other": build_side(*others),
        "vessel": Vessel.objects.first(),
    }


def listed(response, pk) -> int:
    if response.status_code != 200:
        return response.status_code
    rows = response.json()
    rows = rows["results"] if isinstance(rows, dict) else rows
    return 200 if any(row["id"] == pk for row in rows) else 404


def finding_etag(finding) -> str:
    finding.refresh_from_db()
    return content_etag("finding", finding.pk, FindingSerializer(finding).data)


def patch(api, obj, url, data):
    obj.refresh_from_db()
    return api.patch(url, data, format="json", HTTP_IF_MATCH=etag_for(obj))


def _post(path_of, body=None):
    return lambda api, s, w: api.post(path_of(s), body(s, w) if callable(body) else (body or {}),
                                      format="json")


def _get(path_of):
    return lambda api, s, w: api.get(path_of(s))


def _list(path, pk_of):
    return lambda api, s, w: listed(api.get(path(s) if callable(path) else path), pk_of(s))


SIGN = {"password": PASSWORD}
ALL = {p: 200 for p in PERSONAS}
ROLE_HOLDERS_READ = {"author": 200, "reviewer": 200, "approver": 200, "auditor": 200,
                     "outsider": 404, "admin": 200}
NOBODY_ELSE_READS = {"author": 404, "reviewer": 404, "approver": 404, "auditor": 404,
                     "outsider": 404, "admin": 200}


def only(winners: dict, others: int, *, outsider: int = 404, admin: int = 403) -> dict:
    cells = {p: winners.get(p, others) for p in PERSONAS}
    cells.setdefault("outsider", outsider)
    cells["outsider"] = winners.get("outsider", outsider)
    cells["admin"] = winners.get("admin", admin)
    return cells


def on_other(own: dict, *, refused: int = 404, author: int | None = None) -> dict:
    """On a process where the persona holds no role: invisible (404) to review endpoints;
    record endpoints refuse (403) before looking the record up, except that a record an
    author may change elsewhere is simply not found."""
    cells = {p: (own["admin"] if p == "admin" else refused) for p in PERSONAS}
    if author is not None:
        cells["author"] = author
    return cells


RECORD_PATCH = {"refused": 403, "author": 404}
RECORD_POST = {"refused": 403}


# (name, action, expected on own side, expected on other side)
READS = [
    ("list processes", _list("/api/v1/processes/", lambda s: s.process.pk)),
    ("get process", _get(lambda s: f"/api/v1/processes/{s.process.pk}/")),
    ("list steps", _list("/api/v1/steps/", lambda s: s.step.pk)),
    ("list steps filtered by process", _list(lambda s: f"/api/v1/steps/?process={s.process.pk}",
                                             lambda s: s.step.pk)),
    ("get step", _get(lambda s: f"/api/v1/steps/{s.step.pk}/")),
    ("get step indicator history", _get(lambda s: f"/api/v1/steps/{s.step.pk}/indicator-history/")),
    ("list calorimetry runs", _list("/api/v1/calorimetry-runs/",
                                    lambda s: s.step.calorimetry_runs.get().pk)),
    ("get calorimetry run", _get(lambda s: f"/api/v1/calorimetry-runs/"
                                           f"{s.step.calorimetry_runs.get().pk}/")),
    ("get decomposition test", _get(lambda s: f"/api/v1/decomposition-tests/"
                                              f"{s.step.decomposition_tests.get().pk}/")),
    ("export process", _get(lambda s: f"/api/v1/processes/{s.process.pk}/export/")),
    ("list revisions", _list("/api/v1/revisions/", lambda s: s.lodged.pk)),
    ("get revision", _get(lambda s: f"/api/v1/revisions/{s.lodged.pk}/")),
    ("get revision history", _get(lambda s: f"/api/v1/revisions/{s.lodged.pk}/history/")),
    ("get revision diff", _get(lambda s: f"/api/v1/revisions/{s.lodged.pk}/diff/"
                                         f"?against={s.lodged.pk}")),
    ("list signatures", _list("/api/v1/signatures/", lambda s: s.lodged.signatures.get().pk)),
    ("get signature", _get(lambda s: f"/api/v1/signatures/{s.lodged.signatures.get().pk}/")),
    ("list findings", _list("/api/v1/findings/", lambda s: s.finding.pk)),
    ("get finding", _get(lambda s: f"/api/v1/findings/{s.finding.pk}/")),
    ("list roles", _list("/api/v1/process-roles/", lambda s: s.process.roles.first().pk)),
    ("get process history", _get(lambda s: f"/api/v1/processes/{s.process.pk}/history/")),
    ("get process diff", _get(lambda s: f"/api/v1/processes/{s.lodged.process_id}/diff/"
                                        "?from=1&to=1")),
    ("get record history", _get(lambda s: f"/api/v1/history/hazards.reactionstep/"
                                          f"{s.step.pk}/")),
]

WRITES = [
    ("change process", lambda api, s, w: patch(
        api, s.process, f"/api/v1/processes/{s.process.pk}/",
        {"description": "changed", "reason": "matrix"}),
     only({"author": 200, "admin": 200}, 403, outsider=403), RECORD_PATCH),
    ("change step", lambda api, s, w: patch(
        api, s.step, f"/api/v1/steps/{s.step.pk}/", {"name": "changed", "reason": "matrix"}),
     only({"author": 200, "admin": 200}, 403, outsider=403), RECORD_PATCH),
    ("add step", _post(lambda s: "/api/v1/steps/", lambda s, w: {
        "process": s.process.pk, "sequence": 9, "name": "New", "operation_mode": "batch",
        "process_temperature": "30 degC", "reaction_mass": "1000 kg",
        "specific_heat_capacity": "2 kJ/(kg*K)", "system": "open", "operating_pressure": "1 bar",
        "reason": "matrix"}),
     only({"author": 201, "admin": 201}, 403, outsider=403), RECORD_POST),
    ("add calorimetry run", _post(lambda s: "/api/v1/calorimetry-runs/", lambda s, w: {
        "step": s.step.pk, "specific_reaction_heat": "100 kJ/kg", "reason": "matrix"}),
     only({"author": 201, "admin": 201}, 403, outsider=403), RECORD_POST),
    ("open revision", _post(lambda s: "/api/v1/revisions/", lambda s, w: {"process": s.fresh.pk}),
     only({"author": 201}, 403)),
    ("submit draft", _post(lambda s: f"/api/v1/revisions/{s.draft.pk}/submit/", SIGN),
     only({"author": 201}, 403)),
    ("review lodged", _post(lambda s: f"/api/v1/revisions/{s.lodged.pk}/review/", SIGN),
     only({"reviewer": 201}, 403)),
    ("approve checked", _post(lambda s: f"/api/v1/revisions/{s.checked.pk}/approve/", SIGN),
     only({"approver": 201}, 403)),
    ("sign checked as approved", _post(lambda s: f"/api/v1/revisions/{s.checked.pk}/sign/",
                                       {**SIGN, "meaning": "approved"}),
     only({"approver": 201}, 403)),
    ("sign lodged as approved (skipping review)", _post(
        lambda s: f"/api/v1/revisions/{s.lodged.pk}/sign/", {**SIGN, "meaning": "approved"}),
     only({"approver": 409}, 403)),
    ("send lodged back", _post(lambda s: f"/api/v1/revisions/{s.lodged.pk}/send-back/",
                               {"reason": "matrix"}),
     only({"reviewer": 200, "approver": 200}, 403)),
    ("send checked back", _post(lambda s: f"/api/v1/revisions/{s.checked.pk}/send-back/",
                                {"reason": "matrix"}),
     only({"approver": 200}, 403)),
    ("raise finding", _post(lambda s: "/api/v1/findings/", lambda s, w: {
        "process": s.process.pk, "title": "x", "kind": "blocking", "owner": "author",
        "due_date": "2027-01-01"}),
     only({"reviewer": 201, "approver": 201}, 403)),
    ("update finding", lambda api, s, w: api.patch(
        f"/api/v1/findings/{s.finding.pk}/", {"status": "resolved", "reason": "matrix"},
        format="json", HTTP_IF_MATCH=finding_etag(s.finding)),
     # The owner (author) marks it ready for check; only checkers settle it (issue 18).
     only({"reviewer": 200, "approver": 200}, 403)),
    ("grant role", lambda api, s, w: api.post("/api/v1/process-roles/", {
        "process": s.process.pk, "user": "outsider", "role": "auditor", "reason": "matrix"},
        format="json"),
     only({"admin": 201}, 403, outsider=403), RECORD_POST),
    ("move step into a process of this side", lambda api, s, w: patch(
        api, w["own"].step, f"/api/v1/steps/{w['own'].step.pk}/",
        {"process": s.process.pk, "sequence": 7, "reason": "matrix"}),
     only({"author": 200, "admin": 200}, 403, outsider=403), RECORD_POST),
]

# Not tied to a process: the same on both sides.
GLOBAL = [
    ("list vessels", _list("/api/v1/vessels/", lambda s: Vessel.objects.first().pk), ALL),
    ("change vessel", lambda api, s, w: patch(api, w["vessel"],
                                              f"/api/v1/vessels/{w['vessel'].pk}/",
                                              {"name": "Renamed reactor"}),
     only({"admin": 200}, 403, outsider=403)),
    ("create process", lambda api, s, w: api.post("/api/v1/processes/", {
        "name": "A new route", "site": s.process.site.code}, format="json"),
     only({"author": 201, "admin": 201}, 403, outsider=403)),
]


def attempt(world, persona, action, side) -> int:
    api = world["clients"][persona]
    sid = transaction.savepoint()
    try:
        result = action(api, world[side], world)
    finally:
        transaction.savepoint_rollback(sid)
    return result if isinstance(result, int) else result.status_code


def mismatches(world, rows) -> list[str]:
    wrong = []
    for name, action, own, other in rows:
        for side, expected in (("own", own), ("other", other)):
            for persona in PERSONAS:
                got = attempt(world, persona, action, side)
                if got != expected[persona]:
                    wrong.append(f"{persona} / {name} / {side}: expected "
                                 f"{expected[persona]}, got {got}")
    return wrong


@pytest.mark.django_db
def test_only_role_holders_and_administrators_read_a_process_and_its_records(world):
    rows = [(name, action, ROLE_HOLDERS_READ, NOBODY_ELSE_READS) for name, action in READS]
    assert mismatches(world, rows) == [], "\n".join(mismatches(world, rows))


@pytest.mark.django_db
def test_each_write_and_signature_belongs_to_one_role_on_ones_own_process(world):
    rows = [(name, action, own, on_other(own, **other[0]) if other else on_other(own))
            for name, action, own, *other in WRITES]
    assert mismatches(world, rows) == [], "\n".join(mismatches(world, rows))


@pytest.mark.django_db
def test_reference_data_and_new_processes_follow_model_permissions(world):
    rows = [(name, action, expected, expected) for name, action, expected in GLOBAL]
    assert mismatches(world, rows) == [], "\n".join(mismatches(world, rows))


@pytest.mark.django_db
def test_anonymous_requests_see_and_change_nothing(world):
    api = client_for(None)
    side = world["own"]
    for url in ("/api/v1/processes/", f"/api/v1/revisions/{side.lodged.pk}/",
                "/api/v1/signatures/", "/api/v1/findings/", "/api/v1/process-roles/",
                f"/api/v1/processes/{side.process.pk}/history/"):
        assert api.get(url).status_code in (401, 403), url
    assert api.post(f"/api/v1/revisions/{side.draft.pk}/submit/", SIGN,
                    format="json").status_code in (401, 403)
    assert side.draft.signatures.count() == 0
    assert CalorimetryRun.objects.count() == 8
