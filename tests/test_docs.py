"""The README and DEVELOPERS.md keep the promises the project makes about itself.

Checks here are of the project's own documents (no published source is involved).
"""

import importlib.util
import re
from pathlib import Path

from penstock import fittings
from penstock.schema import SECTIONS, reference_markdown

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _updater():
    spec = importlib.util.spec_from_file_location("upd", ROOT / "tools" /
                                                  "update_readme_reference.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_readme_case_reference_is_current():
    assert _updater().updated(README) == README, (
        "README case reference is stale: run python tools/update_readme_reference.py")
    assert reference_markdown() in README


def test_every_key_and_loss_kind_is_documented():
    for sec in SECTIONS:
        for f in sec.fields:
            assert f"`{f.name}`" in README, f.name
    for kind in fittings.LOSS_KINDS:
        assert f"`{kind}`" in README, kind


def test_quick_start_has_exactly_two_commands():
    block = re.search(r"## Quick start.*?```sh\n(.*?)```", README, re.S).group(1)
    cmds = [line for line in block.splitlines() if line.strip()]
    assert len(cmds) == 2
    assert cmds[0].startswith("pip install") and "penstock run cases/" in cmds[0]
    demo = cmds[0].split("penstock run ", 1)[1].split()[0]
    assert (ROOT / demo / "site.toml").is_file()


def test_readme_carries_the_cautions():
    text = README.lower()
    assert "planning-level" in text and "licensed" in text and "codes and standards" in text


def test_developers_guide_lists_every_module():
    guide = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    for path in (ROOT / "penstock").glob("*.py"):
        if path.name != "__init__.py":
            assert path.name in guide or path.stem in guide, path.name
