"""Render one PdfJob in a child process with a memory and CPU-time limit.

Run as `python -m hazards.dossier.sandbox MEMORY_BYTES CPU_SECONDS`: the job arrives on stdin
as one line of JSON without its charts (an empty object: no job, exit), then the charts as
JSON until the end of stdin; the PDF leaves on stdout. The limits are set before WeasyPrint is
imported (RLIMIT_AS for memory, RLIMIT_CPU for time); the parent adds a wall-clock timeout and kills
the child past it. WeasyPrint keeps the whole document in memory and does not give memory
back after a render (INTEGRITY.md §4.5), so a render never runs in a worker's own process.
"""

from __future__ import annotations

import json
import resource
import sys
from collections.abc import Mapping

from hazards.dossier.pdf import PdfJob, preload, write_pdf

EXIT_MEMORY = 3
EXIT_ERROR = 4


def _caused_by_memory(exc: BaseException | None) -> bool:
    """WeasyPrint wraps errors (e.g. a fetch that ran out of memory); look down the chain."""
    seen = 0
    while exc is not None and seen < 20:
        if isinstance(exc, MemoryError):
            return True
        exc, seen = exc.__cause__ or exc.__context__, seen + 1
    return False


class LateCharts(Mapping):
    """The job's charts, read from the rest of stdin when the first one is asked for."""

    def __init__(self, stream):
        self._stream, self._charts = stream, None

    def _load(self) -> dict:
        if self._charts is None:
            self._charts = json.loads(self._stream.read() or b"{}")
        return self._charts

    def __getitem__(self, name):
        return self._load()[name]

    def __iter__(self):
        return iter(self._load())

    def __len__(self):
        return len(self._load())


def main(argv: list[str]) -> int:
    memory, cpu = int(argv[1]), int(argv[2])
    if memory > 0:
        resource.setrlimit(resource.RLIMIT_AS, (memory, memory))
    if cpu > 0:
        resource.setrlimit(resource.RLIMIT_CPU, (cpu, cpu + 1))
    try:
        job_data = json.loads(sys.stdin.buffer.readline() or b"{}")
        if not job_data:
            return EXIT_ERROR  # the parent gave up before sending a job
        # The parent draws the charts meanwhile: the import and the first part of the layout
        # (HTML, styles) cost no time of the render. The charts are read at the first one.
        preload()
        job_data["charts"] = LateCharts(sys.stdin.buffer)
        pdf = write_pdf(PdfJob(**job_data))
    except MemoryError:
        sys.stderr.write("dossier render exceeded its memory limit\n")
        return EXIT_MEMORY
    except BaseException as exc:  # noqa: BLE001 - reported to the parent as text
        if _caused_by_memory(exc):
            sys.stderr.write("dossier render exceeded its memory limit\n")
            return EXIT_MEMORY
        sys.stderr.write(f"dossier render failed: {type(exc).__name__}: {exc}\n")
        return EXIT_ERROR
    sys.stdout.buffer.write(pdf)
    sys.stdout.buffer.flush()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
