"""Benchmark: dossier rendering against WeasyPrint alone on the same finished HTML.

Run by hand: `python tests/bench/bench_dossier.py` (a throw-away database is created by
pytest-django's machinery is not used here; the script builds synthetic frozen content, so it
needs no database rows). Prints times, ratios and peak memory; asserts nothing about time.

  ratio_20   = full render of a 20-step dossier (view, charts, HTML, PDF in-process)
               / WeasyPrint alone on the same finished HTML and charts   (target <= 1.5)
               The charts are drawn on EXOLEDGER_DOSSIER_CHART_PROCESSES processes (default:
               one per core, at most 4), as the worker draws them; the one-process figure is
               printed too.
  scale      = full render of 40 steps / full render of 20 steps          (target <= 2.3)
  sandboxed  = the same through the bounded child process the worker uses
"""

from __future__ import annotations

import copy
import os
import resource
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
os.environ.setdefault("DJANGO_SETTINGS_MODULE", "hazards.settings")
os.environ.setdefault("DATABASE_URL", "postgres://bench.invalid/none")  # never connected

import django  # noqa: E402

django.setup()

from django.conf import settings  # noqa: E402
from django.test import override_settings  # noqa: E402

from hazards.dossier.pdf import write_pdf  # noqa: E402
from hazards.dossier.render import DossierMeta, build_job, render_sandboxed  # noqa: E402
from tests.dossier.test_charts import SERIES, SNAP  # noqa: E402


def content(steps: int) -> dict:
    record_steps, series = [], {}
    for i in range(steps):
        snap = copy.deepcopy(SNAP)
        # Every step its own numbers, so no two steps draw the same chart.
        snap["inputs"]["process_temperature_k"] += 0.5 * i
        snap["values"]["mtsr_k"] += 0.9 * i
        snap["values"]["td24_k"] += 1.3 * i
        snap["values"]["plant_peak_heat_release_w"] *= 1.0 + 0.02 * i
        if i % 2 == 0:
            snap["inputs"]["operation_mode"] = "batch"
        else:
            snap["inputs"]["series_sha256"] = "ab" * 32
        snap["references"] = ["stoessel2008", "keller1997", "townsend_tou1980"]
        snap["warnings"] = ["TD24 is a screening estimate from a single DSC onset"]
        record_steps.append({"id": i + 1, "sequence": i + 1, "name": f"Bench step {i + 1}",
                             "indicators": snap})
    series["ab" * 32] = SERIES
    context = {
        "schema": "exoledger.dossier/1",
        "process": {"id": 1, "name": "Bench route", "description": "",
                    "site": {"code": "varnholt", "name": "Varnholt works"}},
        "revision": {"id": 1, "number": 3, "state": "endorsed", "state_label": "Approved by the safety committee",
                     "created_at": "2026-03-01T08:00:00Z", "content_sha256": "0" * 64},
        "signatures": [{"printed_name": "Bench Signer", "meaning": "approved",
                        "meaning_label": "Approved", "signed_at": "2026-03-02T09:00:00Z"}],
        "findings": [], "history": [], "last_approved": None, "audit_head_hash": "f" * 64,
        "provenance": {}, "series": series,
        "references": {"stoessel2008": "Stoessel 2008.", "keller1997": "Keller 1997.",
                       "townsend_tou1980": "Townsend and Tou 1980."},
        "record_date": "2026-03-02T09:00:00Z",
    }
    return {"record": {"steps": record_steps}, "context": context}


META = DossierMeta(id=1, version=1, process_id=1, created_at="2026-03-02T10:00:00Z",
                   content_sha256="0" * 64, context_sha256="1" * 64, seal="2" * 64)


def timed(fn):
    start = time.perf_counter()
    out = fn()
    return time.perf_counter() - start, out


def measure(c: dict, runs: int = 3) -> tuple[float, float, int]:
    """Best full render (build + PDF) and best WeasyPrint-alone time over interleaved runs.

    Each run times the data assembly and charts (`build_job`), then WeasyPrint on the finished
    job (`write_pdf`): the full render is their sum, WeasyPrint alone the second part. Taking
    both from the same runs keeps a loaded machine's drift out of the ratio.
    """
    fulls, alones, size = [], [], 0
    for _ in range(runs):
        t_build, job = timed(lambda: build_job(c, META))
        t_pdf, pdf = timed(lambda job=job: write_pdf(job))
        fulls.append(t_build + t_pdf)
        alones.append(t_pdf)
        size = len(pdf)
    return min(fulls), min(alones), size


def main():
    results = {}
    for steps in (20, 40):
        full, alone, size = measure(content(steps))
        results[steps] = (full, alone, size)
        print(f"{steps} steps: full render {full:.2f} s, WeasyPrint alone {alone:.2f} s, "
              f"ratio {full / alone:.2f}, {size / 1024:.0f} KiB")
    c20 = content(20)
    with override_settings(DOSSIER_CHART_PROCESSES=1):
        serial, serial_alone, _ = measure(c20, runs=2)
    sandboxed = min(timed(lambda: render_sandboxed(c20, META, timeout=300))[0] for _ in range(2))
    peak_parent = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    peak_child = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"ratio_20 (full / WeasyPrint alone) = {results[20][0] / results[20][1]:.2f}  "
          "(target <= 1.5)")
    print(f"scale (40 steps / 20 steps, full)  = {results[40][0] / results[20][0]:.2f}  "
          "(target <= 2.3)")
    print(f"charts on one process: 20 steps {serial:.2f} s, ratio {serial / serial_alone:.2f} "
          f"(this machine: {os.cpu_count()} cores; "
          f"{settings.DOSSIER_CHART_PROCESSES} chart processes above)")
    print(f"sandboxed 20 steps: {sandboxed:.2f} s, ratio to WeasyPrint alone "
          f"{sandboxed / results[20][1]:.2f} (includes the child's start-up and imports)")
    print(f"peak memory: this process {peak_parent:.0f} MiB, largest child (render or charts) "
          f"{peak_child:.0f} MiB")


if __name__ == "__main__":
    main()
