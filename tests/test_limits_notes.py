"""The tables printed in standards_notes/*.md agree with the data files, row for row.

The notes are written in the published notation ("1842/f", "(900/f^2)", "3 f^0.5", "f/40",
"616000/f^1.2", "NA"); this test parses that notation (a small grammar, no eval) and compares
it with the coefficient/exponent columns of each CSV. Tolerance rel 1e-12: the same decimal
constants are written in both places.
"""

from __future__ import annotations

import csv
import io
import re
import tomllib
from fractions import Fraction
from importlib import resources
from pathlib import Path

import pytest

from rfsafe.verification import state_of

NOTES = Path(__file__).resolve().parent.parent / "standards_notes"
MARK = re.compile(r"<!-- limits-table: (\w+) -->")
NUM = r"(\d+(?:\.\d+)?(?:e-?\d+)?)"
FORMS = [  # (pattern, (coef, exp) builder)
    (re.compile(rf"^{NUM}$"), lambda a: (float(a), 0.0)),
    (re.compile(rf"^{NUM}/f$"), lambda a: (float(a), -1.0)),
    (re.compile(rf"^{NUM}/f\^{NUM}$"), lambda a, n: (float(a), -float(n))),
    (re.compile(rf"^f/{NUM}$"), lambda a: (float(1 / Fraction(a)), 1.0)),
    (re.compile(rf"^{NUM} f$"), lambda a: (float(a), 1.0)),
    (re.compile(rf"^{NUM} f\^{NUM}$"), lambda a, n: (float(a), float(n))),
]


def parse_formula(cell: str):
    """Published notation -> (coef, exp) with value = coef * f**exp; None for NA/—."""
    text = cell.strip()
    if text in ("—", "-", "NA", "instantaneous"):
        return None
    text = text.strip("()").strip()
    for pattern, build in FORMS:
        m = pattern.match(text)
        if m:
            return build(*m.groups())
    raise AssertionError(f"unparsed formula {cell!r}")


def parse_range(cell: str):
    m = re.match(rf"^>?{NUM}-{NUM} (kHz|MHz|GHz)$", cell.strip())
    assert m, cell
    return float(m.group(1)), float(m.group(2)), m.group(3)


def note_tables():
    """{table name: (note file, [row dicts])} for every marked table in the notes."""
    found = {}
    for path in sorted(NOTES.glob("*.md")):
        lines = path.read_text(encoding="utf-8").splitlines()
        for i, line in enumerate(lines):
            m = MARK.search(line)
            if not m:
                continue
            header = [c.strip() for c in lines[i + 1].strip("|").split("|")]
            rows = []
            for row in lines[i + 3:]:
                if not row.startswith("|"):
                    break
                rows.append(dict(zip(header, (c.strip() for c in row.strip().strip("|").split("|")))))
            assert m.group(1) not in found, f"{m.group(1)} printed twice"
            found[m.group(1)] = (path.name, rows)
    return found


def csv_rows(file):
    text = resources.files("rfsafe.limits").joinpath("data", file).read_text(encoding="utf-8")
    return list(csv.DictReader(io.StringIO("\n".join(ln for ln in text.splitlines() if not ln.startswith("#")))))


def csv_law(row, coef_col, exp_col):
    if not row.get(coef_col, "").strip():
        return None
    return float(Fraction(row[coef_col])), float(row[exp_col])


SOURCES = tomllib.loads(resources.files("rfsafe.limits").joinpath("data", "sources.toml").read_text(encoding="utf-8"))
TABLES = note_tables()


def test_every_data_table_is_printed_in_a_note():
    assert set(TABLES) == set(SOURCES["tables"])
    expected = {"fcc.md", "icnirp2020.md", "icnirp1998.md", "ieee2019.md", "sc6.md", "fcc_exemption.md",
                "eu1999.md"}
    assert {p.name for p in NOTES.glob("*.md")} >= expected


def approx_law(got, want):
    if want is None:
        return got is None
    return got is not None and got == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize("name", sorted(t for t in SOURCES["tables"] if t != "fcc_1307_b3_erp_table1"))
def test_limit_table_in_note_matches_csv(name):
    note, rows = TABLES[name]
    data = csv_rows(SOURCES["tables"][name]["file"])
    assert len(rows) == len(data), note
    s_col = "power_density_mw_cm2" if "power_density_mw_cm2" in data[0] else "power_density_w_m2"
    by_key = {(r["environment"], float(Fraction(r["freq_min"])), float(Fraction(r["freq_max"])), r["freq_unit"]): r
              for r in data}
    for row in rows:
        lo, hi, unit = parse_range(row["f"])
        rec = by_key[(row["environment"], lo, hi, unit)]
        s_header = next(h for h in row if h.startswith("S ("))
        assert s_header == ("S (mW/cm^2)" if s_col.endswith("mw_cm2") else "S (W/m^2)")
        where = f"{note}: {row['environment']} {row['f']}"
        assert approx_law(parse_formula(row["E (V/m)"]), csv_law(rec, "e_field_v_m", "e_field_exp")), where
        assert approx_law(parse_formula(row["H (A/m)"]), csv_law(rec, "h_field_a_m", "h_field_exp")), where
        s_cell = row[s_header]
        if "," in s_cell:  # IEEE pair (S_E, S_H)
            s_e, s_h = s_cell.strip("()").split(",")
            assert approx_law(parse_formula(s_e), csv_law(rec, "power_density_e_w_m2", "power_density_e_exp")), where
            assert approx_law(parse_formula(s_h), csv_law(rec, "power_density_h_w_m2", "power_density_h_exp")), where
            assert csv_law(rec, s_col, "power_density_exp") is None, where
        else:
            assert approx_law(parse_formula(s_cell), csv_law(rec, s_col, "power_density_exp")), where
            # parentheses in the note <=> "plane-wave equivalent" in the data (47 CFR 1.1310 footnote)
            if name == "fcc_1310_table1":
                assert s_cell.startswith("(") == (rec["power_density_note"] == "plane-wave equivalent"), where
        avg = row["averaging (min)"]
        assert approx_law(parse_formula(avg), csv_law(rec, "averaging_minutes", "averaging_exp")), where
        assert (avg == "instantaneous") == (rec["basis"] == "instantaneous"), where
        # the note's "checked" column states the row's verification as the CSV holds it
        assert row["checked"] == state_of(rec["verification"]), where


def test_exemption_erp_table_in_note_matches_csv():
    note, rows = TABLES["fcc_1307_b3_erp_table1"]
    data = csv_rows("fcc_1307_b3_erp_table1.csv")
    assert len(rows) == len(data)
    for row, rec in zip(rows, data):
        lo, hi, unit = parse_range(row["f"])
        assert (lo, hi, unit) == (float(rec["freq_min"]), float(rec["freq_max"]), rec["freq_unit"])
        cell = row["threshold ERP (W)"]
        assert "R^2" in cell
        formula = re.sub(r"\s+", " ", cell.replace("R^2", "")).replace(" /", "/").strip()
        assert approx_law(parse_formula(formula), (float(rec["erp_coef_w"]), float(rec["freq_exp"]))), cell
        assert row["checked"] == state_of(rec["verification"]), cell


def test_notes_say_what_could_not_be_verified():
    for path in NOTES.glob("*.md"):
        text = path.read_text(encoding="utf-8")
        assert "## What could not be verified" in text and "from memory" in text, path.name
        assert "## Source" in text and "## How rfsafe applies it" in text, path.name


@pytest.mark.parametrize("name", sorted(SOURCES["tables"]))
def test_verification_paragraph_agrees_with_the_data(name):
    # Every note has a "## Verification" paragraph; a note whose tables hold a row read in the
    # published text or a reproduction says where it was read, and one whose rows are all
    # "not confirmed" says so. The row-by-row states are compared above ("checked" column).
    note, _ = TABLES[name]
    text = (NOTES / note).read_text(encoding="utf-8")
    assert "## Verification" in text, note
    para = text.split("## Verification", 1)[1].split("\n## ", 1)[0]
    states = {state_of(r["verification"]) for r in csv_rows(SOURCES["tables"][name]["file"])}
    if states & {"published text", "reproduction", "partly"}:
        assert "Read in" in para or "read in" in para, note
    if "not confirmed" in states:
        assert "not confirmed" in text.split("## Verification", 1)[1], note
    if states == {"not confirmed"}:
        assert "not confirmed" in para, note


def test_every_standard_has_a_note():
    for sid in SOURCES["standards"]:
        assert (NOTES / f"{sid}.md").is_file(), sid
