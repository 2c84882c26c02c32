"""Every public function of the physics modules documents exactly its parameters.

numpydoc convention (STYLE.md): a 'Parameters' section listing each parameter of the
signature, in order, each description ending with its unit in brackets, and a 'Returns'
section. A project convention; no published source is involved.
"""

import importlib
import inspect
import re

import pytest

MODULES = ["water", "friction", "fittings", "gradeline", "hydrology", "turbines", "energy",
           "drafttube", "wavespeed", "surge", "transients", "materials", "pipewall",
           "economics", "diameter", "thrust"]

#: Sections beyond Parameters and Returns that every function of a module must carry.
FULL_SECTIONS = {"water": ("Notes", "References"), "friction": ("Notes", "References")}

ENTRY = re.compile(r"\n(?=[A-Za-z_*][\w, *]*(?: : |$))")


def _public_functions():
    for name in MODULES:
        mod = importlib.import_module(f"penstock.{name}")
        names = getattr(mod, "__all__", None) or [n for n in dir(mod) if not n.startswith("_")]
        for fname in names:
            obj = getattr(mod, fname)
            if inspect.isfunction(obj) and obj.__module__ == mod.__name__:
                yield pytest.param(name, obj, id=f"{name}.{fname}")


def _parameters_section(doc):
    if "Parameters\n----------\n" not in doc:
        return ""
    return doc.split("Parameters\n----------\n", 1)[1].split("\n\n", 1)[0]


def documented_parameters(section):
    """Parameter names of a numpydoc 'Parameters' section, in order."""
    names = []
    for line in section.splitlines():
        if line and not line.startswith(" "):
            names += [n.strip().lstrip("*") for n in line.split(" : ")[0].split(",")]
    return names


@pytest.mark.parametrize("module, func", list(_public_functions()))
def test_docstring_parameters_match_signature(module, func):
    doc = inspect.getdoc(func)
    section = _parameters_section(doc)
    assert documented_parameters(section) == list(inspect.signature(func).parameters)
    # every parameter entry ends with its unit in brackets ([-] for none)
    for entry in ENTRY.split(section):
        if entry.strip():
            assert re.search(r"\[[^\]]*\]\s*$", entry.strip()), f"no unit: {entry!r}"
    for name in ("Returns",) + FULL_SECTIONS.get(module, ()):
        assert f"\n{name}\n" in doc, f"{func.__qualname__}: no {name} section"
