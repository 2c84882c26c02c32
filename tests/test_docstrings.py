"""Every public function of the physics modules documents exactly its parameters.

numpydoc convention (STYLE.md): a 'Parameters' section listing each parameter of the
signature, in order, each with its unit in brackets. A project convention; no published
source is involved.
"""

import importlib
import inspect
import re

import pytest

MODULES = ["water", "friction", "fittings", "gradeline", "hydrology", "turbines", "energy",
           "drafttube", "wavespeed", "surge", "transients", "materials", "pipewall",
           "economics", "diameter"]


def _public_functions():
    for name in MODULES:
        mod = importlib.import_module(f"penstock.{name}")
        names = getattr(mod, "__all__", None) or [n for n in dir(mod) if not n.startswith("_")]
        for fname in names:
            obj = getattr(mod, fname)
            if inspect.isfunction(obj) and obj.__module__ == mod.__name__:
                yield pytest.param(obj, id=f"{name}.{fname}")


def documented_parameters(func):
    """Parameter names in the numpydoc 'Parameters' section of ``func``, in order."""
    lines = inspect.getdoc(func).splitlines()
    if "Parameters" not in lines:
        return []
    names = []
    body = lines[lines.index("Parameters") + 2:]
    for line, following in zip(body, body[1:] + [""]):
        if following and set(following) == {"-"}:
            break   # the next section's header
        if line and not line.startswith(" "):
            names += [n.strip().lstrip("*") for n in line.split(" : ")[0].split(",")]
    return names


@pytest.mark.parametrize("func", list(_public_functions()))
def test_docstring_parameters_match_signature(func):
    params = [p for p in inspect.signature(func).parameters
              if p not in ("args", "kwargs", "params", "inputs")]
    documented = [p for p in documented_parameters(func)
                  if p not in ("args", "kwargs", "params", "inputs")]
    assert documented == params, func.__qualname__


@pytest.mark.parametrize("func", list(_public_functions()))
def test_every_documented_parameter_has_a_unit(func):
    doc = inspect.getdoc(func)
    if "Parameters" not in doc.splitlines():
        return
    section = doc.split("Parameters", 1)[1].split("\n\n\n", 1)[0]
    section = re.split(r"\n(Returns|Yields|Raises|Notes|References|Examples)\n-+", section)[0]
    blocks = re.split(r"\n(?=\S)", section.split("\n", 2)[-1])
    for block in blocks:
        if not block.strip() or " : " not in block.splitlines()[0]:
            continue
        kind = block.splitlines()[0].split(" : ", 1)[1]
        if not re.search(r"numeric|float|int\b|array|Series", kind):
            continue   # objects, text and callables carry no unit
        assert re.search(r"\[[^\]]*\]", block), f"{func.__qualname__}: no unit in {block!r}"
