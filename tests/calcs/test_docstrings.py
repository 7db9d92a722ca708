"""Every public calcs function documents itself, and its Parameters match its signature."""

import importlib
import inspect
import pkgutil
import re

import pytest

import calcs

MODULES = [importlib.import_module(f"calcs.{m.name}") for m in pkgutil.iter_modules(calcs.__path__)
           if not m.name.startswith("_")]


def public_functions():
    for mod in MODULES:
        for name, obj in vars(mod).items():
            if (not name.startswith("_") and inspect.isfunction(obj)
                    and obj.__module__ == mod.__name__):
                yield pytest.param(obj, id=f"{mod.__name__}.{name}")


def sections(doc):
    """Map numpy-style section titles to their text."""
    out, title, lines = {}, None, []
    rows = doc.splitlines()
    for i, row in enumerate(rows):
        nxt = rows[i + 1].strip() if i + 1 < len(rows) else ""
        if row.strip() and nxt and set(nxt) == {"-"} and len(nxt) == len(row.strip()):
            if title:
                out[title] = "\n".join(lines)
            title, lines = row.strip(), []
        elif title and not (row.strip() and set(row.strip()) == {"-"}):
            lines.append(row)
    if title:
        out[title] = "\n".join(lines)
    return out


def documented_parameters(text):
    names = []
    for row in text.splitlines():
        m = re.match(r"^(\w+(?:, \w+)*) :", row.strip()) if not row.startswith(" " * 8) else None
        if m:
            names.extend(n.strip() for n in m.group(1).split(","))
    return names


def test_every_module_has_public_functions_to_check():
    assert len(list(public_functions())) > 80


@pytest.mark.parametrize("func", list(public_functions()))
def test_docstring_has_parameters_returns_and_references_or_examples(func):
    doc = inspect.getdoc(func)
    assert doc, "missing docstring"
    assert doc.splitlines()[0].strip(), "missing one-line summary"
    parts = sections(doc)
    assert "Returns" in parts
    assert "References" in parts or "Examples" in parts
    if inspect.signature(func).parameters:
        assert "Parameters" in parts


@pytest.mark.parametrize("func", list(public_functions()))
def test_documented_parameters_match_the_signature(func):
    parts = sections(inspect.getdoc(func))
    signature = [p for p in inspect.signature(func).parameters if p not in ("self", "cls")]
    documented = documented_parameters(parts.get("Parameters", ""))
    # "arrays : sequences" documents *arrays
    assert set(documented) == set(signature), (documented, signature)
