"""The dossier names the software that rendered it (issue: reproducible installs)."""

from __future__ import annotations

import json
from importlib import metadata

from tests.dossier.helpers import attachments, page_texts


def test_the_dossier_names_the_software_that_rendered_it(issued_data):
    # Reference: the installed distributions' own metadata.
    context = json.loads(attachments(issued_data["pdf"])["dossier-context.json"])
    for name in ("numpy", "scipy", "pint", "chemicals", "matplotlib", "weasyprint"):
        assert context["software"][name] == metadata.version(name), name
    cover = page_texts(issued_data["pdf"])[0]
    assert f"weasyprint {metadata.version('weasyprint')}" in cover
