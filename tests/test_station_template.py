"""The starter written by ``rfsafe init`` is valid and conservative as it stands."""

from typer.testing import CliRunner

from rfsafe.assess import assess
from rfsafe.cli import app
from rfsafe.station import load_station


def test_starter_is_conservative_as_it_stands(tmp_path):
    path = tmp_path / "starter.toml"
    r = CliRunner().invoke(app, ["init", str(path)])
    assert r.exit_code == 0
    loaded = load_station(path)
    # no schedule and no duty-factor override switched on: continuous transmission (the conservative default)
    assert all(c.schedule is None and c.duty_factor is None for c in loaded.model.configurations)
    assert loaded.model.ground_reflection == "full"          # F = 4, the largest factor (OET Bulletin 65)
    res = assess(loaded)
    for c in res.configurations:
        assert set(c.transmit_fraction.values()) == {1.0}
    # the schedule is offered, commented out, with the condition under which it may be used
    text = path.read_text()
    assert "# schedule = {" in text and "only if you keep to it" in text
