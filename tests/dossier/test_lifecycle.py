"""Versions, immutability, verification, determinism, the API and the commands."""

from __future__ import annotations

import io
import json
import subprocess
import sys

import pikepdf
import pypdf
import pytest
from django.core.management import call_command
from django.db import transaction

from hazards.dossier.models import Dossier
from hazards.dossier.render import DossierMeta, render_sandboxed
from hazards.dossier.seal import verify_pdf
from hazards.dossier.services import dossier_render, dossier_request
from tests.dossier.helpers import sha


def test_a_done_dossier_can_be_neither_changed_nor_deleted(issued):
    with pytest.raises(Exception, match="dossier_done_immutable"), transaction.atomic():
        Dossier.objects.filter(pk=issued.pk).update(error="tampered")
    with pytest.raises(Exception, match="dossier_done_immutable"), transaction.atomic():
        Dossier.objects.filter(pk=issued.pk).delete()
    with pytest.raises(Exception, match="dossier_content_read_only"), transaction.atomic():
        Dossier.objects.filter(pk=issued.pk).update(content={"record": {}})


def test_the_same_revision_is_reused_a_reissue_gets_the_next_version_and_all_stay(issued, api):
    again, created = dossier_request(process=issued.process, enqueue=False)
    assert (again.pk, created) == (issued.pk, False)
    second, created = dossier_request(process=issued.process, reissue=True, enqueue=False)
    assert created and second.version == issued.version + 1
    assert second.content_sha256 == issued.content_sha256
    dossier_render(dossier_id=second.pk, sandbox=False)
    listed = api.get("/api/v1/dossiers/", {"process": issued.process_id}).json()
    rows = listed["results"] if isinstance(listed, dict) else listed
    assert {r["version"] for r in rows} == {1, 2}
    for row in rows:
        response = api.get(f"/api/v1/dossiers/{row['id']}/pdf/")
        assert response.status_code == 200
        assert sha(response.content) == row["sha256"]


def test_an_unaltered_pdf_verifies_and_an_edited_one_or_attachment_does_not(issued, tmp_path):
    pdf = bytes(issued.pdf)
    good = verify_pdf(pdf)
    assert good.valid, good.problems
    assert good.dossier_id == issued.pk and good.revision.startswith("revision 1")
    assert good.data_match_database

    # The text of the PDF edited (its title) and saved again.
    with pikepdf.open(io.BytesIO(pdf)) as doc:
        doc.docinfo["/Title"] = "Edited"
        out = io.BytesIO()
        doc.save(out)
    edited = verify_pdf(out.getvalue())
    assert edited.seal_valid and not edited.file_unaltered and not edited.valid

    # The attached revision replaced by other data.
    with pikepdf.open(io.BytesIO(pdf)) as doc:
        doc.attachments["revision.json"] = pikepdf.AttachedFileSpec(doc, b'{"steps":[]}')
        out = io.BytesIO()
        doc.save(out)
    swapped = verify_pdf(out.getvalue())
    assert not swapped.attachments_match_seal and not swapped.valid

    path = tmp_path / "good.pdf"
    path.write_bytes(pdf)
    call_command("verify_dossier", str(path))
    bad = tmp_path / "bad.pdf"
    bad.write_bytes(out.getvalue())
    with pytest.raises(SystemExit) as exit_info:
        call_command("verify_dossier", str(bad))
    assert exit_info.value.code == 1


def test_the_verify_endpoint_takes_an_upload(issued, api):
    from django.core.files.uploadedfile import SimpleUploadedFile

    response = api.post("/api/v1/dossiers/verify/",
                        {"file": SimpleUploadedFile("d.pdf", bytes(issued.pdf))},
                        format="multipart")
    assert response.status_code == 200
    assert response.json()["valid"] is True
    response = api.post("/api/v1/dossiers/verify/",
                        {"file": SimpleUploadedFile("d.pdf", bytes(issued.pdf) + b"%junk")},
                        format="multipart")
    assert response.json()["valid"] is False


def test_two_renders_of_one_dossier_in_separate_processes_are_byte_identical(issued):
    meta = DossierMeta.of(issued)
    first = render_sandboxed(issued.content, meta, timeout=120)
    second = render_sandboxed(issued.content, meta, timeout=120)
    assert sha(first) == sha(second) == issued.sha256


def test_render_dossier_writes_the_issued_pdf_and_reuses_it(signed_process, tmp_path):
    out = tmp_path / "d.pdf"
    call_command("render_dossier", str(signed_process.pk), "--output", str(out))
    dossier = Dossier.objects.get(process=signed_process)
    assert sha(out.read_bytes()) == dossier.sha256
    call_command("render_dossier", str(signed_process.pk), "--output", str(tmp_path / "e.pdf"))
    assert (tmp_path / "e.pdf").read_bytes() == out.read_bytes()
    assert Dossier.objects.filter(process=signed_process).count() == 1


def test_requesting_through_the_api_queues_a_job_and_shows_its_status(signed_process, api,
                                                                     client, admin_user):
    from django_tasks_db.models import DBTaskResult

    response = api.post(f"/api/v1/processes/{signed_process.pk}/dossiers/", {}, format="json")
    assert response.status_code == 202
    body = response.json()
    assert body["status"] == "queued" and body["version"] == 1 and body["pdf_url"] is None
    assert DBTaskResult.objects.filter(args_kwargs__args=[body["id"]]).count() == 1
    assert api.get(f"/api/v1/dossiers/{body['id']}/pdf/").status_code == 409
    client.force_login(admin_user)
    fragment = client.get(f"/api/v1/dossiers/{body['id']}/status.html")
    assert b'data-status="queued"' in fragment.content


def test_a_render_past_its_time_or_memory_limit_fails_cleanly(signed_process):
    dossier, _ = dossier_request(process=signed_process, enqueue=False)
    failed = dossier_render(dossier_id=dossier.pk, timeout=0.2)
    # The one limit is enforced twice: the parent's clock and the child's CPU-time rlimit;
    # which fires first depends on the machine, and either names the limit.
    assert failed.status == "failed", failed.error
    assert ("took longer than its limit of 0.2 s" in failed.error
            or "exceeded its CPU-time limit of 0.2 s" in failed.error), failed.error
    retried, _ = dossier_request(process=signed_process, enqueue=False)
    assert retried.pk != dossier.pk  # a failed dossier is not reused
    failed = dossier_render(dossier_id=retried.pk, memory_bytes=96 * 2**20)
    assert failed.status == "failed" and "memory limit" in failed.error


def test_the_url_fetcher_serves_only_the_projects_static_files():
    from hazards.dossier.pdf import STATIC_DIR, PdfJob, RefusedURL, make_fetcher, write_pdf

    fetcher = make_fetcher({"a.svg": "<svg xmlns='http://www.w3.org/2000/svg'/>"})
    assert fetcher.fetch((STATIC_DIR / "fonts/fonts.css").as_uri()).read()
    assert fetcher.fetch("chart:a.svg").read().startswith(b"<svg")
    for url in ("file:///etc/passwd", "http://127.0.0.1:8000/", "chart:other.svg",
                (STATIC_DIR / "../settings.py").as_uri()):
        with pytest.raises((RefusedURL, ValueError)):
            fetcher.fetch(url)
    with pytest.raises(BaseException, match="(?i)fetch"):
        write_pdf(PdfJob(html="<img src='file:///etc/hostname'>"))


def test_the_sandbox_imports_no_django():
    code = ("import sys, hazards.dossier.pdf, hazards.dossier.sandbox; "
            "print('django' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "False"


def _sandbox(stdin: bytes) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "hazards.dossier.sandbox", str(2**31), "60"],
                          input=stdin, capture_output=True, check=False, timeout=120)


def test_the_sandbox_takes_the_pages_first_and_the_charts_after_them():
    from hazards.dossier.sandbox import EXIT_ERROR

    svg = ("<svg xmlns='http://www.w3.org/2000/svg' width='40' height='20'>"
           "<text x='1' y='15'>chart text 42</text></svg>")
    pages = {"html": "<p>page text</p><img src='chart:a.svg'>", "attachments": [],
             "record_date": "2026-03-02T09:00:00Z"}
    done = _sandbox(json.dumps(pages).encode() + b"\n" + json.dumps({"a.svg": svg}).encode())
    assert done.returncode == 0, done.stderr
    text = " ".join(p.extract_text() for p in pypdf.PdfReader(io.BytesIO(done.stdout)).pages)
    assert "page text" in text and "chart text 42" in text
    # A chart the pages link but the second part lacks fails the render, naming it.
    missing = _sandbox(json.dumps(pages).encode() + b"\n{}")
    assert missing.returncode == EXIT_ERROR and b"a.svg" in missing.stderr
    # A parent that gives up before sending pages: the child ends with an error, no PDF.
    assert _sandbox(b"").returncode == EXIT_ERROR
