"""Benchmark: dossier rendering against WeasyPrint alone on the same finished HTML.

Run by hand: `python tests/bench/bench_dossier.py` (a throw-away database is created by
pytest-django's machinery is not used here; the script builds synthetic frozen content, so it
needs no database rows). Prints times, ratios and peak memory; asserts nothing about time.

  ratio_20   = full render of a 20-step dossier (view, charts, HTML, PDF in-process)
               / WeasyPrint alone on the same finished HTML and charts   (target <= 1.5)
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

from hazards.dossier.pdf import write_pdf  # noqa: E402
from hazards.dossier.render import DossierMeta, build_job, render_sandboxed  # noqa: E402
from tests.dossier.test_charts import SERIES, SNAP  # noqa: E402


def content(steps: int) -> dict:
    record_steps, series = [], {}
    for i in range(steps):
        snap = copy.deepcopy(SNAP)
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
        "revision": {"id": 1, "number": 3, "state": "endorsed", "state_label": "Endorsed",
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


def best(fn, runs=3):
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - start)
    return min(times), out


def main():
    results = {}
    for steps in (20, 40):
        c = content(steps)
        full, pdf = best(lambda c=c: write_pdf(build_job(c, META)))
        job = build_job(c, META)
        alone, _ = best(lambda job=job: write_pdf(job))
        results[steps] = (full, alone, len(pdf))
        print(f"{steps} steps: full render {full:.2f} s, WeasyPrint alone {alone:.2f} s, "
              f"ratio {full / alone:.2f}, {len(pdf) / 1024:.0f} KiB")
    sandboxed, _ = best(lambda: render_sandboxed(content(20), META, timeout=300), runs=2)
    peak_parent = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    peak_child = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"ratio_20 (full / WeasyPrint alone) = {results[20][0] / results[20][1]:.2f}  "
          "(target <= 1.5)")
    print(f"scale (40 steps / 20 steps, full)  = {results[40][0] / results[20][0]:.2f}  "
          "(target <= 2.3)")
    print(f"sandboxed 20 steps: {sandboxed:.2f} s, ratio to WeasyPrint alone "
          f"{sandboxed / results[20][1]:.2f} (includes the child's start-up and imports)")
    print(f"peak memory: this process {peak_parent:.0f} MiB, largest render child "
          f"{peak_child:.0f} MiB")


if __name__ == "__main__":
    main()
