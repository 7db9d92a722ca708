"""The import contracts (.importlinter) are part of the suite: an import that crosses a layer
upwards, brings DRF below the HTTP layer, Django into calcs, or closes a cycle fails here as
it fails `lint-imports` in CI."""

from __future__ import annotations

import configparser
from pathlib import Path

from importlinter.cli import lint_imports

ROOT = Path(__file__).resolve().parent.parent
CONTRACTS = ROOT / ".importlinter"


def test_import_contracts_are_kept(capsys):
    code = lint_imports(config_filename=str(CONTRACTS), no_cache=True, no_logo=True)
    out = capsys.readouterr().out
    assert code == 0, out
    assert "4 kept, 0 broken" in out, out


def test_contracts_ignore_no_import_and_keep_the_layer_order():
    config = configparser.ConfigParser()
    config.read(CONTRACTS)
    assert not any("ignore_imports" in config[s] for s in config.sections())
    layers = [line.strip() for line in config["importlinter:contract:layers"]["layers"].split("\n")
              if line.strip()]
    # Issue 19's order (there is no hazards.selectors package: see the file's comment), with
    # the one presenter of a snapshot (hazards.presenting) just above the unit edge it uses.
    assert layers == [
        "hazards.urls | hazards.admin | hazards.management",
        "hazards.demo : hazards.measures_demo",
        "hazards.api | hazards.web",
        "hazards.dossier | hazards.whatif",
        "hazards.oversight",
        "hazards.review",
        "hazards.services",
        "hazards.models | hazards.integration",
        "hazards.presenting",
        "hazards.quantities",
        "calcs",
    ]
