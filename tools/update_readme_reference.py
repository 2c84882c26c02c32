"""Regenerate the case-file reference in README.md from penstock/schema.py.

    python tools/update_readme_reference.py

tests/test_docs.py fails when the README's block is out of date.
"""

from pathlib import Path

from penstock.schema import reference_markdown

START, END = "<!-- case-reference:start -->", "<!-- case-reference:end -->"


def updated(text: str) -> str:
    head, rest = text.split(START, 1)
    _, tail = rest.split(END, 1)
    return f"{head}{START}\n{reference_markdown()}\n{END}{tail}"


if __name__ == "__main__":
    path = Path(__file__).resolve().parents[1] / "README.md"
    path.write_text(updated(path.read_text(encoding="utf-8")), encoding="utf-8")
