"""``penstock new``: write a commented template case folder that passes ``penstock check``.

The template is generated from :mod:`penstock.schema`, so every key is listed with
its description and default.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd

from .case import CaseError
from .schema import CASE_FILE, SECTIONS

#: Values the template fills in (an invented example site).
EXAMPLE = {
    ("site", "name"): "My site (template: replace with the real site)",
    ("site", "note"): "Template values: an invented site with a synthetic flow record.",
    ("levels", "headwater"): "650 m",
    ("levels", "tailwater"): "520 m",
    ("route", "profile"): "profile.csv",
    ("pipe", "from"): "0 m",
    ("pipe", "to"): "900 m",
    ("pipe", "diameter"): "1.0 m",
    ("pipe", "material"): "welded_steel",
    ("pipe", "wall_thickness"): "10 mm",
    ("flows", "record"): "flows.csv",
    ("flows", "design"): "2.0 m^3/s",
    ("turbine", "type"): "francis",
}

#: Local losses in the template.
EXAMPLE_LOSSES = [
    {"kind": "entrance", "at": "0 m", "shape": "bellmouth"},
    {"kind": "bend", "at": "450 m", "angle": "30 deg", "radius_ratio": 3},
    {"kind": "valve", "at": "890 m", "valve_type": "butterfly"},
]


def _toml(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    return json.dumps(value, ensure_ascii=False)


def template_text() -> str:
    """The commented ``site.toml`` of the template."""
    lines = ["# penstock case file. Every dimensional value carries its unit, e.g. \"350 m\",",
             "# \"12 ft\", \"4.5 m^3/s\" or \"160 cfs\". Lines starting with # are comments.",
             "# Keys shown commented out are optional; their defaults apply.",
             "# Results are planning-level: codes, standards and a licensed engineer govern design.",
             ""]
    for sec in SECTIONS:
        lines.append(f"# {sec.description}")
        if sec.name == "loss":
            for loss in EXAMPLE_LOSSES:
                lines.append("[[loss]]")
                lines += [f"{k} = {_toml(v)}" for k, v in loss.items()]
                lines.append("")
            continue
        absent = not sec.required and any(f.required for f in sec.fields)
        if absent:   # an optional section whose keys are required once it is written
            lines.append("# Optional: remove the leading '# ' of the next lines to use it.")
        header = f"[[{sec.name}]]" if sec.array else f"[{sec.name}]"
        lines.append(f"# {header}" if absent else header)
        for f in sec.fields:
            desc = f.description
            if f.choices:
                desc += " One of: " + ", ".join(f.choices) + "."
            lines.append(f"# {desc}")
            if absent:
                lines.append(f"# {f.name} = ...")
            elif (sec.name, f.name) in EXAMPLE:
                lines.append(f"{f.name} = {_toml(EXAMPLE[(sec.name, f.name)])}")
            elif f.default is not None:
                lines.append(f"# {f.name} = {_toml(f.default)}")
            else:
                lines.append(f"# {f.name} = ...")
        lines.append("")
    return "\n".join(lines)


def write_template(folder) -> Path:
    """Write the template case folder; refuse to overwrite a non-empty folder."""
    from .report.publish import MANIFEST, enclosing_case, enclosing_report

    folder = Path(folder)
    if folder.is_symlink() or (folder.exists() and not folder.is_dir()):
        raise CaseError(str(folder), "", "exists and is not a folder; expected a new folder "
                        "name")
    if folder.exists() and any(folder.iterdir()):
        raise CaseError(str(folder), "", "exists and is not empty; expected a new folder name")
    around = enclosing_case(folder.parent)
    if around is not None:
        raise CaseError(str(folder), "", f"lies inside the case folder {around} (it holds "
                        f"{CASE_FILE}); expected a new case folder outside every case")
    around = enclosing_report(folder.parent)
    if around is not None:
        raise CaseError(str(folder), "", f"lies inside the report folder {around} (it holds "
                        f"{MANIFEST}), which penstock replaces whole; expected a folder "
                        "elsewhere")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except (FileExistsError, NotADirectoryError):
        raise CaseError(str(folder), "", "a part of the path is a file, not a folder; "
                        "expected a new folder name") from None
    (folder / CASE_FILE).write_text(template_text(), encoding="utf-8")
    ch = np.array([0, 150, 300, 450, 600, 750, 900], float)
    z = np.array([640, 636, 628, 600, 570, 540, 522], float)
    with (folder / "profile.csv").open("w", encoding="utf-8") as fh:
        fh.write("# TEMPLATE route profile (invented): chainage and pipe centreline elevation\n")
        pd.DataFrame({"chainage [m]": ch, "elevation [m]": z}).to_csv(fh, index=False)
    days = pd.date_range("2020-01-01", "2021-12-31", freq="D")
    doy = days.day_of_year.to_numpy()
    q = 2.2 + 1.5 * np.cos(2 * np.pi * (doy - 120) / 365.25)
    with (folder / "flows.csv").open("w", encoding="utf-8") as fh:
        fh.write("# TEMPLATE flow record: SYNTHETIC values, replace with the site's record\n")
        pd.DataFrame({"date": days.strftime("%Y-%m-%d"),
                      "flow [m^3/s]": np.round(q, 3)}).to_csv(fh, index=False)
    return folder
