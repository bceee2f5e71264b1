"""`rfsafe wire`: solve a wire antenna file (impedance, gain, near fields at listed points)."""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import typer

_CAUTIONS = (
    "Method: thin-wire moment method (Pocklington equation, piecewise-sinusoidal Galerkin, delta-gap "
    "feeds). It assumes perfectly conducting wires much thinner than a wavelength and segments "
    "between 4 radii and lambda/10 long; feed impedances drift slowly as segments are refined.",
    "Fields are for the stated power delivered to the antenna (after feedline loss) and a "
    "continuous carrier; this command does not compare them with exposure limits. Local regulation, "
    "the regulator's own guidance and licensed practice govern.",
)

#: What each ground model leaves out (shown with the method, one per solve).
_GROUND_CAUTIONS = {
    "free-space": "No ground (free space): a ground below the antenna reflects, so fields near the "
                  "ground and the gain differ; ground = \"perfect\" or \"real\" with the soil models it.",
    "perfect": "A \"perfect\" ground is a lossless mirror at z = 0: real soil absorbs and reflects less, so "
               "fields and gain over real ground differ (often lower far away, and different near the base); "
               "ground = \"real\" with the soil models it (Sommerfeld integrals).",
    "real": "Real ground: the soil is one homogeneous half-space below z = 0 with the stated permittivity "
            "and conductivity; layered or frozen soil, buried radials and ground rods, and nearby buildings "
            "are not modelled. Named soil classes are typical values: measured soil replaces them.",
}


@dataclasses.dataclass(frozen=True)
class WireFeedResult:
    wire: str
    position: float
    position_m: tuple[float, float, float]
    feed_impedance_ohm: complex
    voltage_v_rms: float
    current_a_rms: float


@dataclasses.dataclass(frozen=True)
class WirePointResult:
    label: str
    position_m: tuple[float, float, float]
    distance_to_wire_m: float
    e_field_v_m: float
    h_field_a_m: float


@dataclasses.dataclass(frozen=True)
class WireResult:
    file: str
    method: str
    freq_hz: float
    wavelength_m: float
    ground: str
    input_power_w: float
    num_segments: int
    num_unknowns: int
    feed_impedance_ohm: tuple[complex, ...]
    feeds: tuple[WireFeedResult, ...]
    gain_dbi: float
    peak_azimuth_deg: float
    peak_elevation_deg: float
    front_to_back_db: float
    radiated_over_input_power: float
    points: tuple[WirePointResult, ...]
    cautions: tuple[str, ...]
    load_power_over_input_power: float = 0.0
    carried_over_input_power: float = 1.0   # 0.5 c^H Re(Z) c / terminal power (see solver.power_basis_w)
    loads: tuple = ()                  # rfsafe.antenna.wire.loads.LoadStress, at input_power_w
    common_mode: object = None         # rfsafe.antenna.wire.shield.CommonModeCurrent, or None


def build_result(path: Path) -> WireResult:
    """Load, solve and evaluate a wire file (all computation lives in the library)."""
    import numpy as np

    from rfsafe.antenna.wire import load_wire_file, solve
    from rfsafe.antenna.wire.fields import point_segment_distances
    from rfsafe.antenna.wire.model import wire_label

    spec = load_wire_file(path)
    sol = solve(spec, spec.freq_mhz * 1e6, field_prefix="")
    scale = sol.power_scale(spec.input_power_w)
    feeds = []
    for f, feed in enumerate(spec.feeds):
        iw = feed.wire if isinstance(feed.wire, int) else [w.label for w in spec.wires].index(feed.wire)
        v, i = sol.feed_voltage_v[f] * scale, sol.feed_current_a[f] * scale
        feeds.append(WireFeedResult(wire=wire_label(spec, iw), position=feed.position,
                                    position_m=tuple(float(x) for x in sol.structure.feed_position_m[f]),
                                    feed_impedance_ohm=sol.feed_impedance_ohm[f],
                                    voltage_v_rms=abs(v) / math.sqrt(2), current_a_rms=abs(i) / math.sqrt(2)))
    points = []
    cautions = list(_CAUTIONS)
    cautions.insert(1, _GROUND_CAUTIONS[sol.ground])
    if spec.points:
        pts = np.array([p.position_m for p in spec.points], dtype=float)
        e, h = sol.fields_rms(pts, spec.input_power_w, field="points")
        st = sol.structure
        dist = point_segment_distances(pts[:, None, :], st.start_m[None], st.end_m[None]).min(axis=1)
        for j, p in enumerate(spec.points):
            points.append(WirePointResult(label=p.label, position_m=tuple(p.position_m),
                                          distance_to_wire_m=float(dist[j]),
                                          e_field_v_m=float(e[j]), h_field_a_m=float(h[j])))
        cautions.extend(sol.point_cautions(pts, [p.label for p in spec.points]))
        if sol.ground == "real":   # places given the reflection-coefficient approximation, by name
            from rfsafe.antenna.wire.ground import approximation_cautions

            cautions.extend(approximation_cautions(sol.structure, sol.k, pts, [p.label for p in spec.points]))
    from rfsafe.antenna.wire.loads import load_stress
    from rfsafe.antenna.wire.shield import common_mode_current

    loads = load_stress(sol, spec.input_power_w)
    if loads:
        cautions.append("Loads: voltages are peaks for input_power_w as a continuous carrier; give the "
                        "transmitter's PEP at the antenna as input_power_w to read the voltage a trap or coil "
                        "must withstand. A load's impedance is taken as declared at this one frequency.")
    cm = common_mode_current(sol, spec.input_power_w, feed=spec.shield.feed) if spec.shield else None
    if cm is not None:
        cautions.append("Feedline shield: its outer surface is modelled as a bare wire along the declared route "
                        "(jacket, equipment, mains and ground leads beyond the route are not modelled); the "
                        "common-mode current depends strongly on the route length and what the far end "
                        "connects to.")
    if sol.ground == "real":
        cautions.append("Real ground: 'radiated / input power' counts the space wave into the air only; the rest "
                        "is lost in the soil or carried along it by the surface wave. Soil values of the named "
                        "classes are typical, not measured: the field near the ground depends on them.")
    from rfsafe.antenna.wire.solver import power_basis_flag

    basis = power_basis_flag([sol])
    if basis is not None:
        cautions.append(basis[0].upper() + basis[1:] + ".")
    return WireResult(
        carried_over_input_power=sol.carried_power_w / sol.input_power_w,
        load_power_over_input_power=sol.load_power_w / sol.input_power_w, loads=loads, common_mode=cm,
        file=str(path), method="thin-wire moment method (PWS Galerkin, reduced kernel)"
        + (f"; {sol.ground_method}" if sol.ground == "real" else ""),
        freq_hz=sol.freq_hz, wavelength_m=sol.wavelength_m, ground=sol.ground,
        input_power_w=spec.input_power_w, num_segments=sol.num_segments, num_unknowns=sol.num_unknowns,
        feed_impedance_ohm=sol.feed_impedance_ohm, feeds=tuple(feeds), gain_dbi=sol.gain_dbi,
        peak_azimuth_deg=sol.peak_azimuth_deg, peak_elevation_deg=sol.peak_elevation_deg,
        front_to_back_db=sol.front_to_back_db, radiated_over_input_power=sol.radiated_over_input_power,
        points=tuple(points), cautions=tuple(cautions))


def _z(z: complex) -> str:
    return f"{z.real:.2f} {'+' if z.imag >= 0 else '-'} j{abs(z.imag):.2f}"


def wire(
    file: Path = typer.Argument(..., help="Wire antenna file (TOML): wires, feeds, ground, freq_mhz, points."),
    json_out: bool = typer.Option(False, "--json", help="Print the result as JSON."),
    wide: bool = typer.Option(False, "--wide", help="Do not fit tables and text to 100 columns."),
) -> None:
    """Solve a wire antenna: feed impedance, gain and near-field E and H at listed points."""
    from rfsafe.cli import output

    output.set_wide(wide)

    import re

    from rfsafe.errors import InputError

    try:
        res = build_result(file)
    except InputError as err:  # name the TOML key the user wrote
        raise InputError(re.sub(r"^points\[(\d+)\]:", r"points[\1].position_m:", str(err))) from None
    if json_out:
        output.print_json(res)
        raise typer.Exit(0)
    typer.echo(output.fit_text(f"Wire antenna {res.file}: {res.freq_hz / 1e6:g} MHz (wavelength "
                               f"{res.wavelength_m:.4g} m), ground {res.ground}, {res.num_segments} segments, "
                               f"{res.num_unknowns} unknowns"))
    typer.echo(output.fit_text(f"Method: {res.method}"))
    typer.echo("")
    typer.echo(output.format_table(
        ["feed", "wire", "position", "impedance [ohm]", "V rms", "I rms [A]"],
        [[str(i), f.wire, f"{f.position:g}", _z(f.feed_impedance_ohm), f"{f.voltage_v_rms:.4g}",
          f"{f.current_a_rms:.4g}"] for i, f in enumerate(res.feeds)],
        title=f"Feeds (at {res.input_power_w:g} W delivered to the antenna)"))
    typer.echo("")
    fb = "n/a" if math.isinf(res.front_to_back_db) else f"{res.front_to_back_db:.2f} dB"
    typer.echo(output.format_table(
        ["quantity", "value"],
        [["peak gain", f"{res.gain_dbi:.2f} dBi"],
         ["peak direction", f"azimuth {res.peak_azimuth_deg:.1f} deg, elevation {res.peak_elevation_deg:.1f} deg"],
         ["front-to-back", fb],
         ["radiated / input power", f"{res.radiated_over_input_power:.5f}"],
         ["carried / input power", f"{res.carried_over_input_power:.5f}"]]
        + ([["power in loads / input power", f"{res.load_power_over_input_power:.5f}"]] if res.loads else []),
        title="Pattern", align="ll"))
    if res.loads:
        typer.echo("")
        typer.echo(output.format_table(
            ["load", "impedance [ohm]", "I rms [A]", "V peak", "dissipated [W]", "rating [V peak]", "headroom"],
            [[ld.label, _z(ld.impedance_ohm), f"{ld.current_a_rms:.4g}", f"{ld.voltage_v_peak:.4g}",
              f"{ld.dissipated_w:.4g}",
              "not rated" if ld.voltage_rating_v_peak is None else f"{ld.voltage_rating_v_peak:g}",
              "-" if ld.voltage_headroom is None else f"{ld.voltage_headroom:.2f}x"] for ld in res.loads],
            title=f"Lumped loads (at {res.input_power_w:g} W delivered to the antenna)"))
    if res.common_mode is not None:
        cm = res.common_mode
        n = len(cm.distance_m)
        rows = sorted(set(range(0, n, max(1, n // 10))) | {n - 1, cm.distance_m.index(cm.max_at_distance_m)})
        typer.echo("")
        choke = ("no choke" if cm.choke_impedance_ohm is None else
                 f"choke {_z(cm.choke_impedance_ohm)} ohm at {cm.choke_distance_m:.3g} m")
        typer.echo(output.format_table(
            ["along route [m]", "x [m]", "y [m]", "z [m]", "I rms [A]"],
            [[f"{cm.distance_m[j]:.3g}", *(f"{c:.3g}" for c in cm.position_m[j]), f"{cm.current_a_rms[j]:.4g}"]
             for j in rows],
            title=(f"Common-mode current on the feedline shield ({cm.route_length_m:.3g} m, far end {cm.far_end}, "
                   f"{choke}); feed current {cm.feed_current_a_rms:.4g} A rms, largest common-mode "
                   f"{cm.max_current_a_rms:.4g} A rms at {cm.max_at_distance_m:.3g} m")))
    if res.points:
        typer.echo("")
        typer.echo(output.format_table(
            ["point", "x [m]", "y [m]", "z [m]", "to wire [m]", "E [V/m rms]", "H [A/m rms]"],
            [[p.label, *(f"{c:.3g}" for c in p.position_m), f"{p.distance_to_wire_m:.3g}",
              f"{p.e_field_v_m:.4g}", f"{p.h_field_a_m:.4g}"] for p in res.points],
            title=f"Near field at {res.input_power_w:g} W delivered to the antenna"))
    for c in res.cautions:
        output.warn(f"Caution: {c}")
    raise typer.Exit(0)


def register(app: typer.Typer) -> None:
    app.command("wire")(wire)
