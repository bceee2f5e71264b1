"""The formatter: tables fitted to 100 columns without losing a cell; text wrapped with its indent."""

from rfsafe.cli.output import fit_text, format_table


def _cells(text):
    return " ".join(text.split())


def test_narrow_table_is_unchanged():
    t = format_table(["a", "b"], [["x", "1"]])
    assert t.splitlines() == ["a  b", "-  -", "x  1"]


def test_wide_table_fits_and_keeps_every_cell():
    heads = ["place"] + [f"quantity number {k} [unit]" for k in range(8)]
    rows = [["Far corner of the garden", *[f"{k * 1.2345:.4f}" for k in range(8)]]]
    t = format_table(heads, rows, width=100)
    assert max(len(line) for line in t.splitlines()) <= 100
    for cell in rows[0]:
        assert cell in t
    assert t.count("Far corner of the garden") >= 1


def test_long_text_cells_wrap_inside_their_column():
    rows = [["p", "word " * 40]]
    t = format_table(["key", "text"], rows, align="ll", width=60)
    assert max(len(line) for line in t.splitlines()) <= 60
    assert _cells(t).count("word") == 40


def test_fit_text_keeps_hanging_indent():
    out = fit_text("  - " + "x " * 80, 40).splitlines()
    assert all(len(line) <= 40 for line in out)
    assert all(line.startswith("    ") for line in out[1:])
