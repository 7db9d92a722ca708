"""A dossier's pages: the frozen content -> HTML + charts -> PDF (in a bounded child process)."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

from django.conf import settings
from django.template.loader import render_to_string

from hazards.dossier import charts as ch
from hazards.dossier import decomposition_charts as dc
from hazards.dossier.pdf import PdfJob, write_pdf
from hazards.dossier.sandbox import EXIT_MEMORY
from hazards.dossier.view import dossier_view
from hazards.quantities import STANDARD_UNITS, display_units
from hazards.services.indicators import canonical_json

DEFERENCE = ("This dossier supports and does not replace a qualified assessment; local codes, "
             "company standards and licensed practice prevail.")
RECORD_NAME, CONTEXT_NAME = "revision.json", "dossier-context.json"
ROOT = Path(__file__).resolve().parents[2]


class RenderError(Exception):
    """A render that did not produce a PDF; the message is safe to show."""


@dataclass(frozen=True)
class DossierMeta:
    """The parts of a Dossier row the pages print (all fixed when it is requested)."""

    id: int
    version: int
    process_id: int
    created_at: str
    content_sha256: str
    context_sha256: str
    seal: str
    requested_by: str = ""
    reason: str = ""

    @classmethod
    def of(cls, dossier) -> DossierMeta:
        user = dossier.requested_by
        return cls(
            id=dossier.pk, version=dossier.version, process_id=dossier.process_id,
            created_at=dossier.created_at.isoformat().replace("+00:00", "Z"),
            content_sha256=dossier.content_sha256, context_sha256=dossier.context_sha256,
            seal=dossier.seal, reason=dossier.reason,
            requested_by=(user.get_full_name() or user.get_username()) if user else "",
        )


def keywords(meta: DossierMeta) -> str:
    """What verify_dossier reads back from the PDF's metadata (pdf:Keywords)."""
    return (f"exoledger-dossier; id={meta.id}; process={meta.process_id}; "
            f"version={meta.version}; content-sha256={meta.content_sha256}; "
            f"context-sha256={meta.context_sha256}; seal={meta.seal}")


def css_string(text: str) -> str:
    """Text safe inside a double-quoted CSS string in a <style> element."""
    out = []
    for char in text:
        if char.isalnum() or char in " .,;:·…-_()/+#'":
            out.append(char)
        else:
            out.append(f"\\{ord(char):x} ")
    return "".join(out)


def chart_key(step: dict, name: str) -> str:
    return f"step-{step['id']}-{name}.svg"


def build_pages(content: dict, meta: DossierMeta) -> tuple[PdfJob, list[dict]]:
    """The job without its charts (their names are known), and the view's steps to draw.

    A signed document reads the same for everyone: the site's standard units, whoever's
    request renders it (a person's display units are for the pages only)."""
    with display_units(STANDARD_UNITS):
        return _build_pages(content, meta)


def _build_pages(content: dict, meta: DossierMeta) -> tuple[PdfJob, list[dict]]:
    view = dossier_view(content, meta)
    for step in view["steps"]:
        names = ch.chart_names(step["snapshot"]) + dc.chart_names(step["decomposition"])
        step["charts"] = [{"name": name, "url": f"chart:{chart_key(step, name)}"}
                          for name in names]
    html = render_to_string("dossier/dossier.html", {
        **view, "meta": meta, "deference": DEFERENCE, "keywords": keywords(meta),
        "header_left": css_string(f"{view['process']['name']} · {view['process']['site']['name']}"),
        "header_right": css_string(f"dossier v{meta.version} · content "
                                   f"{meta.content_sha256[:16]}…"),
        "fonts_css": (ROOT / "hazards/static/fonts/fonts.css").as_uri(),
        "dossier_css": (ROOT / "hazards/static/dossier/dossier.css").as_uri(),
    })
    attachments = [
        {"name": RECORD_NAME, "content": canonical_json(content["record"]),
         "description": f"Canonical content of the revision, SHA-256 {meta.content_sha256}"},
        {"name": CONTEXT_NAME, "content": canonical_json(content["context"]),
         "description": f"Signatures, findings, history and provenance shown in this dossier, "
                        f"SHA-256 {meta.context_sha256}"},
    ]
    job = PdfJob(html=html, attachments=attachments,
                 record_date=content["context"]["record_date"])
    return job, view["steps"]


def draw_charts(steps: list[dict]) -> dict[str, str]:
    """The SVG of every chart the pages link, by its `chart:` name."""
    try:
        drawn = ch.charts_of_steps(
            [(step["snapshot"], step["series"]) for step in steps],
            processes=settings.DOSSIER_CHART_PROCESSES,
            timeout=settings.DOSSIER_RENDER_TIMEOUT_SECONDS)
    except TimeoutError as exc:
        raise RenderError(str(exc)) from None
    out = {chart_key(step, name): svg
           for step, svgs in zip(steps, drawn, strict=True) for name, svg in svgs.items()}
    for step in steps:  # few steps have curves: drawn here, from the frozen points
        for name, svg in dc.decomposition_charts(step.get("decomposition")).items():
            out[chart_key(step, name)] = svg
    return out


def build_job(content: dict, meta: DossierMeta) -> PdfJob:
    """Everything WeasyPrint needs, computed from the frozen content only."""
    job, steps = build_pages(content, meta)
    job.charts = draw_charts(steps)
    return job


def render_in_process(content: dict, meta: DossierMeta) -> bytes:
    return write_pdf(build_job(content, meta))


def render_sandboxed(content: dict, meta: DossierMeta, *, timeout: float | None = None,
                     memory_bytes: int | None = None) -> bytes:
    """Render in a child process bounded in memory (RLIMIT_AS), CPU and wall-clock time."""
    timeout = settings.DOSSIER_RENDER_TIMEOUT_SECONDS if timeout is None else timeout
    memory = settings.DOSSIER_RENDER_MEMORY_BYTES if memory_bytes is None else memory_bytes
    env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1",
           "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")])}
    argv = [sys.executable, "-m", "hazards.dossier.sandbox", str(int(memory)),
            str(max(1, int(timeout) + 1))]
    # The child gets the pages first, then imports WeasyPrint and lays them out while the
    # charts are drawn here; it reads the charts when it first needs one (sandbox.py).
    child = subprocess.Popen(argv, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE, env=env, cwd=ROOT)
    try:
        job, steps = build_pages(content, meta)
        try:
            child.stdin.write(json.dumps(job.to_json()).encode() + b"\n")
            child.stdin.flush()
        except BrokenPipeError:
            pass  # the child died at start (e.g. its memory limit): reported below
        charts = json.dumps(draw_charts(steps)).encode()
    except BaseException:
        child.kill()
        child.communicate()
        raise
    try:
        stdout, stderr = child.communicate(charts, timeout=timeout)
    except subprocess.TimeoutExpired:
        child.kill()
        child.communicate()
        raise RenderError(f"rendering took longer than its limit of {timeout:g} s") from None
    proc = subprocess.CompletedProcess(argv, child.returncode, stdout, stderr)
    if proc.returncode == 0 and proc.stdout.startswith(b"%PDF-"):
        return proc.stdout
    err = [line for line in proc.stderr.decode("utf-8", "replace").strip().splitlines()
           if not line.startswith("Fontconfig")]
    memory_words = ("MemoryError", "annot allocate", "out of memory", "failed to map segment",
                    "bad_alloc")
    if proc.returncode == EXIT_MEMORY or any(w in line for line in err for w in memory_words):
        raise RenderError(f"rendering exceeded its memory limit of {memory // 2**20} MiB")
    if proc.returncode in (-signal.SIGXCPU, -signal.SIGKILL):
        raise RenderError(f"rendering exceeded its CPU-time limit of {timeout:g} s")
    if proc.returncode in (-signal.SIGSEGV, -signal.SIGABRT, -signal.SIGBUS):
        # C code (Pango, cairo-free pydyf, HarfBuzz) that cannot allocate aborts.
        raise RenderError(f"the renderer crashed (signal {-proc.returncode}), most likely at "
                          f"its memory limit of {memory // 2**20} MiB")
    reported = [line for line in err if line.startswith("dossier render failed")]
    message = (reported or err or [f"renderer exited with {proc.returncode}"])[-1]
    raise RenderError(message[:500])
