"""Two people acting on one revision at the same moment, against the real PostgreSQL:
exactly one valid outcome, and nothing lost."""

from __future__ import annotations

import threading

import pghistory
import pytest
from django.db import connection

from hazards.models import ReactionStep
from hazards.review import errors as E
from hazards.review.audit import verify_all
from hazards.review.models import ProcessRevision
from tests.conftest import make_user
from tests.review.factories import RoleFactory, revision_in, sign

pytestmark = pytest.mark.django_db(transaction=True)


def at_once(*jobs) -> list:
    """Run the jobs in threads released together; each returns "ok" or its error message."""
    barrier = threading.Barrier(len(jobs))
    results: list = [None] * len(jobs)

    def run(index, job):
        try:
            barrier.wait(timeout=10)
            job()
            results[index] = "ok"
        except E.ReviewError as exc:
            results[index] = exc.message
        except Exception as exc:  # noqa: BLE001 - reported in the assertion
            results[index] = repr(exc)
        finally:
            connection.close()

    threads = [threading.Thread(target=run, args=(i, job)) for i, job in enumerate(jobs)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    return results


def test_two_approvers_endorsing_at_once_give_exactly_one_endorsement(process, author,
                                                                      reviewer, approver):
    second = make_user("second-approver")
    RoleFactory(process=process, user=second, role="approver")
    checked = revision_in(process, "checked", author=author, reviewer=reviewer)

    results = at_once(lambda: sign(checked, approver, "approved"),
                      lambda: sign(checked, second, "approved"))

    assert sorted(results) == sorted(["ok", E.NOT_CHECKED])
    checked.refresh_from_db()
    assert checked.state == "endorsed"
    assert checked.signatures.filter(meaning="approved").count() == 1
    assert checked.transitions.filter(to_state="endorsed").count() == 1
    assert verify_all() == []


def test_an_edit_during_an_approval_is_kept_and_never_hides_under_the_approval(
        process, author, reviewer, approver):
    checked = revision_in(process, "checked", author=author, reviewer=reviewer)
    step = ReactionStep.objects.get(process=process)

    def edit():
        with pghistory.context(reason="charge corrected during the approval"):
            fresh = ReactionStep.objects.get(pk=step.pk)
            fresh.reaction_mass_kg = 4321.0
            fresh.save()

    results = at_once(lambda: sign(checked, approver, "approved"), edit)

    assert results[1] == "ok"
    # Refused either as stale content or, when the edit committed first and replaced the
    # revision, as no longer checked.
    assert results[0] in ("ok", E.STALE, E.NOT_CHECKED)
    step.refresh_from_db()
    assert step.reaction_mass_kg == 4321.0  # the edit is never lost
    checked.refresh_from_db()
    # Either endorsed first, and then it stays in force while the edit waits in the next
    # draft (issue 21 item 2), or refused as stale and replaced: never an endorsement that
    # binds content it was not shown.
    assert checked.state == ("endorsed" if results[0] == "ok" else "replaced")
    assert checked.content["steps"][0]["reaction_mass_kg"] == 5000.0
    assert checked.signatures.filter(meaning="approved").count() == (results[0] == "ok")
    draft = ProcessRevision.objects.get(process=process, state="drafting")
    assert draft.content["steps"][0]["reaction_mass_kg"] == 4321.0
    assert ProcessRevision.objects.filter(process=process, state="endorsed").exists() == (
        results[0] == "ok")
    assert verify_all() == []


def test_concurrent_writers_never_fork_the_audit_chain(process, author):
    step = ReactionStep.objects.get(process=process)

    def renamer(n):
        def job():
            for i in range(5):
                with pghistory.context(reason=f"writer {n} change {i}"):
                    ReactionStep.objects.filter(pk=step.pk).update(name=f"writer {n} change {i}")
        return job

    results = at_once(*(renamer(n) for n in range(4)))

    assert results == ["ok"] * 4
    from hazards.review.selectors import record_history

    assert sum(r["reason"].startswith("writer ") for r in record_history(step)) == 20
    assert verify_all() == []


def test_a_burst_of_wrong_passwords_gets_no_more_guesses_than_the_lockout_allows(
        monkeypatch):
    # Probe of issue 18 (item 9): the lockout was checked before the row lock, so a burst
    # of concurrent wrong passwords each passed the check and each got a guess.
    from hazards.review import signing
    from tests.review.factories import signing_request

    person = make_user("guesser")
    guesses = []
    real = signing.authenticate

    def slow_authenticate(**kwargs):  # a password hasher's time, widening the window
        guesses.append(kwargs["password"])
        import time

        time.sleep(0.05)
        return real(**kwargs)

    monkeypatch.setattr(signing, "authenticate", slow_authenticate)
    attempts = 12
    results = at_once(*[
        (lambda i=i: signing.reauthenticate(user=person, password=f"guess {i}",
                                            request=signing_request(person)))
        for i in range(attempts)])
    assert len(guesses) == signing.MAX_FAILURES, results
    assert results.count(E.WRONG_PASSWORD) == signing.MAX_FAILURES
    assert results.count(E.SIGNING_LOCKED) == attempts - signing.MAX_FAILURES
