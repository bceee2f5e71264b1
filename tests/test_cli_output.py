"""The formatter: tables fitted to 100 columns without losing a cell; text wrapped with its indent."""

import pytest

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


def test_large_json_is_streamed_compact_with_the_same_content(monkeypatch, capsys):
    """Above COMPACT_JSON_VALUES the JSON is built one member at a time and written compact: the text is
    exactly json.dumps of the whole tree with compact separators (json module, the reference encoder),
    non-finite numbers as null with their note (common practice)."""
    import json
    import math
    from pathlib import Path

    from rfsafe.assess import assess
    from rfsafe.cli import output
    from rfsafe.station import load_station

    demo = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
    res = assess(load_station(demo))
    tree = output.to_jsonable(res)
    output.print_json(res)
    small = capsys.readouterr().out
    assert small == json.dumps(tree, indent=2, ensure_ascii=False) + "\n"       # indented below the bound
    monkeypatch.setattr(output, "COMPACT_JSON_VALUES", 100)
    output.print_json(res)
    big = capsys.readouterr().out
    assert big == json.dumps(tree, separators=(",", ":"), ensure_ascii=False) + "\n"
    assert json.loads(big) == json.loads(small)
    assert output._count_values(res, 10**9) > 1000

    import dataclasses

    @dataclasses.dataclass
    class Holder:
        items: list
        x: float

    odd = Holder(items=[1.5, math.inf, {"a": math.nan}], x=math.inf)
    monkeypatch.setattr(output, "COMPACT_JSON_VALUES", 3)
    output.print_json(odd)
    text = capsys.readouterr().out
    assert text == json.dumps(output.to_jsonable(odd), separators=(",", ":"), ensure_ascii=False) + "\n"
    assert json.loads(text)["x"] is None and "x_note" in json.loads(text)


@pytest.mark.parametrize("table", ["places", "exposures"])
def test_csv_of_many_places_is_written_in_pieces_with_the_same_text(monkeypatch, table):
    """The places and exposures CSV of a large station are written a few hundred places at a time: the text is
    the same as pandas writing the whole table at once (pandas, the reference writer)."""
    from pathlib import Path

    from typer.testing import CliRunner

    from rfsafe.cli import app, cmd_evaluate

    demo = str(Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml")
    whole = CliRunner().invoke(app, ["evaluate", demo, "--csv", table, "--no-remedies"])
    monkeypatch.setattr(cmd_evaluate, "CSV_PLACES_PER_PIECE", 2)
    pieces = CliRunner().invoke(app, ["evaluate", demo, "--csv", table, "--no-remedies"])
    assert whole.exit_code == pieces.exit_code and whole.exit_code in (0, 1, 4)
    assert pieces.stdout == whole.stdout
    assert whole.stdout.count("\n") > 5 and whole.stdout.splitlines()[0].startswith("place,")


def test_tables_are_printed_table_by_table_as_one_text():
    from pathlib import Path

    from typer.testing import CliRunner

    from rfsafe.cli import app
    from rfsafe.cli.cmd_evaluate import render_blocks, render_evaluation
    from rfsafe.remedies import with_answers
    from rfsafe.station import load_station

    demo = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
    res = with_answers(load_station(demo), remedies=False, near_field_maps=False)
    blocks = list(render_blocks(res))
    assert len(blocks) > 3 and "\n".join(blocks) == render_evaluation(res)
    out = CliRunner().invoke(app, ["evaluate", str(demo), "--no-remedies"]).stdout
    assert out == fit_text(render_evaluation(res)) + "\n"


def test_indented_json_is_json_dumps_text():
    """print_json's indented writer gives exactly the text of the json module (the reference encoder) with
    indent=2: on the demo result and on random trees of nested lists, tuples, dicts and scalars (empty
    containers, unicode, escapes, large and negative numbers, booleans, null; hypothesis)."""
    import json
    from pathlib import Path

    from hypothesis import given, settings, strategies as st

    from rfsafe.cli import output
    from rfsafe.remedies import with_answers
    from rfsafe.station import load_station

    def reference(tree):
        return json.dumps(tree, indent=2, ensure_ascii=False, allow_nan=False)

    demo = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
    tree = output.to_jsonable(with_answers(load_station(demo), near_field_maps=True))
    assert output._indented_json(tree) == reference(tree)

    scalars = (st.none() | st.booleans() | st.integers(-10**20, 10**20)
               | st.floats(allow_nan=False, allow_infinity=False) | st.text(max_size=8))
    trees = st.recursive(scalars, lambda kids: st.lists(kids, max_size=4) | st.tuples(kids, kids)
                         | st.dictionaries(st.text(max_size=5), kids, max_size=4), max_leaves=30)

    @settings(max_examples=300, deadline=None)
    @given(trees)
    def check(t):
        assert output._indented_json(t) == reference(t)

    check()
    for bad in ({1: "a"}, [1.0, float("inf")], [object()]):   # left to json, or refused as json refuses
        with pytest.raises((output._NotPlainJSON, ValueError)):
            output._indented_json(bad)
    with pytest.raises(ValueError):
        reference([1.0, float("inf")])
