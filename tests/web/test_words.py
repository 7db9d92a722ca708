"""One vocabulary for the approver's act (issue 21 item 5; DEVELOPERS.md, "Words"): what people
read (pages, notifications and their e-mails, API descriptions and error messages) says
approve / approved / approval and never the retired endorse words. Wire values (the state
`endorsed`, the `approve/` action) are a contract and stay; they appear only inside markup
attributes and backticked names in the API schema, which these checks leave out."""

from __future__ import annotations

import datetime as dt
import re
from html.parser import HTMLParser

import pytest
from django.test import override_settings

from hazards.oversight import notify
from hazards.oversight.models import Kind, Notification, RevalidationSchedule
from hazards.review import errors as E
from hazards.review.models import Finding, FindingKind, Meaning, ReviewState, Role
from hazards.review.services import findings
from hazards.review.services import revisions as rev
from hazards.services.records import record_update
from hazards.web.display import STATE_TEXT
from tests.oversight.conftest import IMMEDIATE
from tests.web.conftest import sign

pytestmark = pytest.mark.django_db
RETIRED = re.compile(r"\bendors\w*", re.IGNORECASE)


class _Text(HTMLParser):
    """The text a reader sees: no tags, attributes, scripts or styles."""

    def __init__(self):
        super().__init__()
        self.parts, self._skip = [], 0

    def handle_starttag(self, tag, attrs):
        self._skip += tag in ("script", "style")

    def handle_endtag(self, tag):
        self._skip -= tag in ("script", "style") and self._skip > 0

    def handle_data(self, data):
        if not self._skip:
            self.parts.append(data)


def visible_text(html: str) -> str:
    parser = _Text()
    parser.feed(html)
    return " ".join(" ".join(parser.parts).split())


def retired_in(text: str) -> list[str]:
    return [text[max(0, m.start() - 60):m.end() + 30] for m in RETIRED.finditer(text)]


def test_the_retired_words_are_found_where_they_occur():
    # The check itself: it finds the word in text and ignores it in attributes.
    assert retired_in(visible_text('<p class="state-endorsed">Endorsed by X</p>'))
    assert not retired_in(visible_text('<p class="state-endorsed">Approved by X</p>'))


@pytest.fixture
def approved_then_changed(people, process, lodged, mailoutbox,
                          django_capture_on_commit_callbacks):
    """Revision 1 approved; then a changed input (a change record), revision 2 submitted, and
    an open blocking finding; each act committed on its own, its notifications delivered."""
    step = process.steps.get()
    with override_settings(TASKS=IMMEDIATE):
        for act in (lambda: sign(lodged, people["reviewer"], "reviewed"),
                    lambda: sign(lodged, people["approver"], "approved"),
                    lambda: record_update(instance=process.steps.get(), data={
                        "reaction_mass_kg": step.reaction_mass_kg * 1.5}),
                    lambda: sign(rev.current_revision(process), people["author"], "authored"),
                    lambda: findings.finding_raise(
                        process=process, user=people["reviewer"],
                        title="Relief line sizing record", kind="blocking",
                        owner=people["author"], due_date=dt.date(2030, 1, 31))):
            with django_capture_on_commit_callbacks(execute=True):
                act()
    finding = Finding.objects.get(process=process)
    return {"step": step, "finding": finding, "revision": lodged}


def test_no_page_uses_a_retired_word(people, process, approved_then_changed, client_as):
    step, finding = approved_then_changed["step"], approved_then_changed["finding"]
    urls = ["/", "/processes/", f"/processes/{process.pk}/", f"/processes/{process.pk}/review/",
            f"/processes/{process.pk}/history/", f"/processes/{process.pk}/revisions/",
            "/steps/", f"/steps/{step.pk}/", "/portfolio/", "/revalidation/", "/changes/",
            "/notifications/", "/notifications/preferences/", f"/findings/{finding.pk}/"]
    found, approved_seen = {}, False
    for role in ("author", "reviewer", "approver", "auditor"):
        client = client_as(people[role])
        for url in urls:
            response = client.get(url)
            assert response.status_code == 200, (role, url, response.status_code)
            text = visible_text(response.content.decode())
            approved_seen |= "approv" in text.lower()
            if hits := retired_in(text):
                found[(role, url)] = hits
    assert found == {}
    assert approved_seen  # the pages do speak of the approval, in the chosen words


def test_no_notification_or_e_mail_uses_a_retired_word(process, approved_then_changed,
                                                       mailoutbox):
    rows = list(Notification.objects.all())
    assert {n.kind for n in rows} >= {Kind.SUBMISSION_WAITING, Kind.APPROVAL_WAITING,
                                      Kind.APPROVAL_LAPSED, Kind.FINDING_ASSIGNED}, rows
    texts = [f"{n.subject}\n{n.body}" for n in rows]
    texts += [f"{m.subject}\n{m.body}" for m in mailoutbox]
    schedule = RevalidationSchedule.objects.get(process=process)
    for period in ("2030-01-01:due", "2030-01-01:overdue"):
        notice = notify.build(Kind.REVALIDATION_DUE, notify.key_of(schedule), period)
        texts.append(f"{notice.subject}\n{notice.body}")
    texts += [str(label) for label in Kind.labels]
    assert [hit for text in texts for hit in retired_in(text)] == []


def test_no_label_or_error_message_uses_a_retired_word():
    words = [*STATE_TEXT.values(), *ReviewState.labels, *Meaning.labels, *Role.labels,
             *FindingKind.labels]
    words += [v for k, v in vars(E).items() if k.isupper() and isinstance(v, str)]
    assert [w for w in words if RETIRED.search(w)] == []
    # The wire value keeps its name; its words are the approval's.
    assert ReviewState.ENDORSED.value == "endorsed"
    assert ReviewState.ENDORSED.label == "Approved by the safety committee"
    assert STATE_TEXT["endorsed"] == "Approved"


def _described(node, path=""):
    """Every description, summary and title in the schema, with its place."""
    if isinstance(node, dict):
        for key, value in node.items():
            if key in ("description", "summary", "title") and isinstance(value, str):
                yield f"{path}/{key}", value
            else:
                yield from _described(value, f"{path}/{key}")
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _described(value, f"{path}/{i}")


def test_the_api_documentation_uses_the_words_and_names_the_wire_values(people, client_as):
    schema = client_as(people["auditor"]).get("/api/v1/schema/?format=json").json()
    hits = {}
    for where, text in _described(schema):
        # Backticked names are wire values (`endorsed`, `approve/`): a contract, kept.
        if found := retired_in(re.sub(r"`[^`]*`", "", text)):
            hits[where] = found
    assert hits == {}
    state = schema["components"]["schemas"]["Revision"]["properties"]["state"]
    assert "`endorsed` = Approved by the safety committee" in state["description"]
