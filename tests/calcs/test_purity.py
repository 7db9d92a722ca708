"""calcs imports no Django: every module is imported in a fresh interpreter."""

import pkgutil
import subprocess
import sys
from pathlib import Path

import calcs

ROOT = Path(calcs.__file__).resolve().parent.parent


def test_no_calcs_module_imports_django():
    names = [f"calcs.{m.name}" for m in pkgutil.iter_modules(calcs.__path__)]
    code = ("import importlib, sys\n"
            f"for name in {names!r}:\n"
            "    importlib.import_module(name)\n"
            "import calcs.scenario as s\n"
            "s.assess_step(s.StepInputs('batch', 303.15, 1.0, 2000.0, 'open', None, None,"
            " solvent_cas='108-88-3', specific_reaction_heat_j_per_kg=1e5))\n"
            "print('django' in sys.modules)\n")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True,
                         check=True, env={"PATH": "/usr/bin:/bin", "PYTHONPATH": str(ROOT)})
    assert out.stdout.strip() == "False", out.stderr
