"""Output of the answers added to ``evaluate``: keep-out tables, remedies, CSV tables, every standard side by side.

Renders results only (rfsafe.remedies computes); pandas is imported inside the functions that use it.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["CSV_TABLES", "load_station_file", "answer_sections", "evaluation_frame", "render_all_standards",
           "all_standards", "all_standards_frame", "governing"]

#: Tables ``rfsafe evaluate --csv TABLE`` can print.
CSV_TABLES = ("places", "exposures", "configurations", "keep-out", "remedies")


def load_station_file(file: Path, standard: str | None):
    """Load a station file; a site file is refused with a pointer to ``rfsafe site``."""
    from rfsafe.errors import InputError
    from rfsafe.station import load_station

    try:
        return load_station(file, standard=standard)
    except InputError:
        import tomllib

        try:
            data = tomllib.loads(Path(file).read_text(encoding="utf-8"))
        except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
            data = None
        if isinstance(data, dict) and ("boundary" in data or "stations" in data):
            raise InputError(f"FILE: {str(file)!r} is a site file (it has boundary/stations), not a station "
                             f"file: review it with `rfsafe site {file}`") from None
        raise


def answer_sections(res) -> list[str]:
    """Ground-level keep-out and remedies as text lines (empty when the result carries none)."""
    from rfsafe.cli.output import format_table

    out: list[str] = []
    if res.ground_keep_out:
        rows = []
        for k in res.ground_keep_out:
            rows.append([k.configuration, k.environment, k.level, f"{k.keep_out_m:.2f}", f"{k.compliance_dist_m:.2f}",
                         str(k.directions)])
        out.append(format_table(
            ["configuration", "environment", "level", "keep-out m", "3-D dist m", "bearings"], rows,
            align="lllrrr", keys=1,
            title="Keep-out on the ground: horizontal distance from the antenna's foot, each configuration alone "
                  "(0 = nobody at that level is above the limit)"))
        out.append("")
    if res.place_remedies:
        out.append("What would make each exceeding place comply (one change at a time, everything else as in the "
                   "file; solved by re-running the evaluation):")
        for pr in res.place_remedies:
            out.append(f"  {pr.place} ({pr.environment}, total ratio {pr.total_ratio:.3g}):")
            out.extend(f"    - {r.text}" for r in pr.remedies)
        out.append("")
    if res.configuration_remedies:
        rows = []
        for cr in res.configuration_remedies:
            by = {r.parameter: r for r in cr.remedies}
            rows.append([cr.configuration, _short(by.get("pep_w"), "W"), _short(by.get("avg_power_w"), "W"),
                         _short(by.get("schedule_on_minutes"), "min"), _short(by.get("line_loss_db"), "dB"),
                         _short(by.get("antenna_height_m"), "m")])
        out.append(format_table(
            ["configuration", "largest PEP", "largest avg power", "on-time per window", "line loss needed",
             "antenna height needed"], rows, align="lrrrrr",
            title="Per configuration, with every place within its limit (everything else unchanged)"))
        out.append("  ok: complies as it is; none: no value of it helps (other sources alone exceed); "
                   "n/a: does not apply")
        out.append("")
    return out


def _short(r, unit: str) -> str:
    from rfsafe.cli.output import compact_number

    if r is None:
        return "-"
    if r.status == "solved":
        return f"{compact_number(r.value)} {unit}"
    if r.status == "already complies":
        if r.parameter in ("pep_w", "avg_power_w") and r.value is not None:
            return f">= {compact_number(r.value)} {unit}"
        return "ok"
    return "none" if r.status == "no value helps" else "n/a"


def evaluation_frame(res, table: str):
    """One table of an evaluation as a pandas DataFrame (CSV columns use the JSON field names)."""
    import pandas as pd

    from rfsafe.errors import bad_value

    if table == "places":
        rows = [{"place": p.label, "environment": p.environment, "x_m": p.x_m, "y_m": p.y_m, "height_m": p.height_m,
                 "total_ratio": p.total_ratio, "total_margin_db": p.total_margin_db, "verdict": p.verdict,
                 "summed": "; ".join(f"{s.configuration} {s.exposure_ratio:.6g}" for s in p.contributions)}
                for p in res.places]
    elif table == "exposures":
        rows = [{"place": p.label, "environment": p.environment, "configuration": x.configuration,
                 "transmitter": x.transmitter, "dist_m": x.dist_m, "gain_dbi": x.gain_dbi,
                 "power_density_w_m2": x.power_density_w_m2, "e_field_v_m": x.e_field_v_m,
                 "h_field_a_m": x.h_field_a_m, "exposure_ratio": x.exposure_ratio, "margin_db": x.margin_db,
                 "method": x.method, "inside_near_field": x.inside_near_field}
                for p in res.places for x in p.exposures]
    elif table == "configurations":
        rows = []
        for c in res.configurations:
            row = {"configuration": c.id, "freq_mhz": c.freq_mhz, "mode": c.mode, "transmitter": c.transmitter,
                   "antenna": c.antenna, "pep_w": c.pep_w, "duty_factor": c.duty_factor,
                   "line_loss_db": c.line_loss_db, "gain_dbi": c.gain_dbi}
            for env in ("controlled", "uncontrolled"):
                d = next(d for d in c.compliance_distances if d.environment == env)
                row.update({f"transmit_fraction_{env}": c.transmit_fraction[env], f"avg_power_{env}_w":
                            c.avg_power_w[env], f"eirp_{env}_w": c.eirp_w[env], f"dist_{env}_m": d.dist_m})
            rows.append(row)
    elif table == "keep-out":
        rows = [{"configuration": k.configuration, "antenna": k.antenna, "environment": k.environment,
                 "level": k.level, "heights_m": " ".join(f"{z:g}" for z in k.heights_m), "keep_out_m": k.keep_out_m,
                 "compliance_dist_m": k.compliance_dist_m, "bearings": k.directions, "method": k.method}
                for k in res.ground_keep_out]
    elif table == "remedies":
        rows = [{"scope": f"place {pr.place}", "parameter": r.parameter, "applies_to": r.applies_to,
                 "current": r.current, "value": r.value, "status": r.status, "ratio_at_value": r.ratio_at_value,
                 "text": r.text} for pr in res.place_remedies for r in pr.remedies]
        rows += [{"scope": f"configuration {cr.configuration} (every place)", "parameter": r.parameter,
                  "applies_to": r.applies_to, "current": r.current, "value": r.value, "status": r.status,
                  "ratio_at_value": r.ratio_at_value, "text": r.text}
                 for cr in res.configuration_remedies for r in cr.remedies]
    else:
        raise bad_value("--csv", table, f"is not a table (accepted: {', '.join(CSV_TABLES)})")
    return pd.DataFrame(rows)


def all_standards(file: Path, *, near_field_maps: bool = True):
    """The station evaluated under every standard rfsafe knows: {standard: result or the refusal text}.

    ``near_field_maps=False`` leaves out the plot data (wire near-field maps, the keep-out plan), for
    tables and CSV, which draw none; every exposure, distance and verdict is the same.
    """
    from rfsafe.assess import assess_with_emitters
    from rfsafe.errors import InputError
    from rfsafe.limits import STANDARD_IDS

    out = {}
    for std in STANDARD_IDS:
        try:
            out[std] = assess_with_emitters(load_station_file(file, std), near_field_maps=near_field_maps)[0]
        except InputError as err:
            if str(err).startswith("FILE"):
                raise
            out[std] = f"not evaluated: {err}"
    return out


def governing(results: dict) -> dict:
    """Per place label, the standard with the largest total exposure ratio (the strictest there)."""
    gov: dict = {}
    for std, res in results.items():
        if isinstance(res, str):
            continue
        for p in res.places:
            if p.label not in gov or p.total_ratio > gov[p.label][1]:
                gov[p.label] = (std, p.total_ratio)
    return {k: v[0] for k, v in gov.items()}


def render_all_standards(results: dict) -> str:
    """Places and configurations under every standard, side by side, with the governing standard per place."""
    from rfsafe.cli.output import compact_number, format_table

    stds = list(results)
    ok = {s: r for s, r in results.items() if not isinstance(r, str)}
    first = next(iter(ok.values()), None)
    out = []
    if first is None:
        return "\n".join(f"{s}: {r}" for s, r in results.items())
    gov = governing(results)
    rows = []
    for p in first.places:
        row = [p.label, p.environment[:3], gov.get(p.label, "-")]
        for s in stds:
            r = ok.get(s)
            pr = next((q for q in r.places if q.label == p.label), None) if r else None
            row.append("-" if pr is None else compact_number(pr.total_ratio) + ("!" if pr.total_ratio > 1 else ""))
        rows.append(row)
    out.append(format_table(["place", "env", "governs"] + stds, rows, align="lll" + "r" * len(stds), keys=2,
                            title="Total exposure ratio at each place under every standard (! above the limit; "
                                  "governs: the largest ratio there)"))
    out.append("")
    rows = []
    for c in first.configurations:
        row = [c.id, f"{c.freq_mhz:g}"]
        for s in stds:
            r = ok.get(s)
            cr = next((q for q in r.configurations if q.id == c.id), None) if r else None
            d = None if cr is None else next(d for d in cr.compliance_distances if d.environment == "uncontrolled")
            row.append("-" if d is None else f"{d.dist_m:.2f}")
        rows.append(row)
    out.append(format_table(["configuration", "MHz"] + stds, rows, align="lr" + "r" * len(stds),
                            title="Uncontrolled (general public) compliance distance [m] under every standard"))
    for s, r in results.items():
        if isinstance(r, str):
            out.append(f"  {s}: {r}")
    return "\n".join(out)


def all_standards_frame(results: dict, table: str):
    """``--standard all --csv``: places (total ratio per standard, governing) or configurations
    (uncontrolled and controlled compliance distance per standard) as a pandas DataFrame."""
    import pandas as pd

    from rfsafe.errors import bad_value

    ok = {s: r for s, r in results.items() if not isinstance(r, str)}
    first = next(iter(ok.values()), None)
    rows = []
    if table == "places":
        gov = governing(results)
        for p in (first.places if first else ()):
            row = {"place": p.label, "environment": p.environment, "governing": gov.get(p.label)}
            for s, r in ok.items():
                row[f"total_ratio_{s}"] = next((q.total_ratio for q in r.places if q.label == p.label), None)
            rows.append(row)
    elif table == "configurations":
        for c in (first.configurations if first else ()):
            row = {"configuration": c.id, "freq_mhz": c.freq_mhz}
            for s, r in ok.items():
                cr = next((q for q in r.configurations if q.id == c.id), None)
                for d in (cr.compliance_distances if cr else ()):
                    row[f"dist_{d.environment}_{s}_m"] = d.dist_m
            rows.append(row)
    else:
        raise bad_value("--csv", table, "is not available with --standard all (accepted: places, configurations)")
    return pd.DataFrame(rows)
