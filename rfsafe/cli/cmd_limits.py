"""``rfsafe limits``: show the exposure limits of a standard, or of all standards side by side."""

from __future__ import annotations

import math
from typing import Optional

import typer

__all__ = ["register", "limits_command"]

_HELP = """Show exposure limits (reference levels) at one or more frequencies.

\b
  rfsafe limits STANDARD FREQ_MHZ... [--json]
  rfsafe limits --compare FREQ_MHZ [--json]

STANDARD is one of fcc, icnirp2020, icnirp1998, ieee2019, sc6, eu1999. Both environments
(controlled and uncontrolled) are shown, with power density in the standard's
published unit and in W/m^2, E [V/m rms], H [A/m rms], the averaging time and the
source of each row. Values marked '*' are derived (plane wave, 377 ohm), not tabulated.
The mark before each source says whether the row was read in the published text (T),
in a faithful reproduction (R), partly (P), or not confirmed (?).
"""


def _fmt(value: float | None, derived: bool = False) -> str:
    if value is None:
        return "-"
    return f"{value:.4g}{'*' if derived else ''}"


def _parse_freqs(texts: list[str]) -> list[float]:
    from rfsafe.errors import InputError, bad_value

    out = []
    for text in texts:
        try:
            f = float(text)
        except ValueError:
            raise bad_value("freq_mhz", text, "is not a number (give the frequency in MHz, "
                            "e.g. 14.2)") from None
        if not math.isfinite(f):
            raise InputError(f"freq_mhz: {text} is not a finite frequency in MHz")
        out.append(f)
    return out


def _entries(standard: str, freq_mhz: float) -> list[dict]:
    """JSON-ready entries (one per environment and basis) of one standard at one frequency."""
    from rfsafe.limits import ENVIRONMENTS, limits_at, standard_info

    info = standard_info(standard)
    # 1 mW/cm^2 = 10 W/m^2; the only published unit other than W/m^2 is mW/cm^2 (FCC).
    to_published = 0.1 if info.power_density_unit == "mW/cm^2" else 1.0
    entries = []
    for env in ENVIRONMENTS:
        for lim in limits_at(standard, freq_mhz * 1e6, env, field="freq_mhz"):
            s = lim.power_density_w_m2
            entries.append({
                "freq_mhz": freq_mhz,
                "standard": standard,
                "environment": lim.environment,
                "environment_label": lim.environment_label,
                "basis": lim.basis,
                "power_density_w_m2": s,
                "power_density_published": None if s is None else s * to_published,
                "power_density_unit": info.power_density_unit,
                "e_field_v_m": lim.e_field_v_m,
                "h_field_a_m": lim.h_field_a_m,
                "averaging_minutes": lim.averaging_minutes,
                "derived": list(lim.derived),
                "power_density_e_w_m2": lim.power_density_e_w_m2,
                "power_density_h_w_m2": lim.power_density_h_w_m2,
                "notes": list(lim.notes),
                "source": lim.source,
                "limit_verification": lim.verification,
            })
    return entries


def _table(entries: list[dict], title: str) -> str:
    from rfsafe.cli.output import format_table

    from rfsafe.verification import LEGEND, marker

    refs: dict[tuple, int] = {}
    rows = []
    for e in entries:
        key = (e["source"], tuple(e["notes"]))
        n = refs.setdefault(key, len(refs) + 1)
        derived = set(e["derived"])
        s_pub = e["power_density_published"]
        rows.append([
            f"{e['freq_mhz']:g}", e["standard"],
            f"{e['environment']} ({e['environment_label']})", e["basis"],
            "-" if s_pub is None else f"{s_pub:.4g} {e['power_density_unit']}",
            _fmt(e["power_density_w_m2"], "power_density_w_m2" in derived),
            _fmt(e["e_field_v_m"], "e_field_v_m" in derived),
            _fmt(e["h_field_a_m"], "h_field_a_m" in derived),
            "none (instantaneous)" if e["averaging_minutes"] is None else f"{e['averaging_minutes']:.3g}",
            f"[{n}]",
        ])
    text = format_table(
        ["f [MHz]", "standard", "environment", "basis", "S (as published)", "S [W/m^2]",
         "E [V/m]", "H [A/m]", "avg [min]", "src"],
        rows, title=title, align="rllllrrrrl")
    lines = [text, "", "'-' = not defined by the standard; '*' = derived (plane wave, 377 ohm, "
             "far field only), not tabulated.", "source " + LEGEND]
    verif = {e["source"]: e["limit_verification"] for e in entries}
    for (source, notes), n in refs.items():
        lines.append(f"[{n}] {marker(verif[source])} {source}")
        lines.append(f"    verification: {verif[source]}")
        lines.extend(f"    note: {note}" for note in notes)
    return "\n".join(lines)


def _cautions(entries: list[dict]) -> None:
    from rfsafe.cli.output import warn

    warn("Caution: these are reference levels as rfsafe holds them; the regulation that applies "
         "to you, the regulator's own guidance and licensed practice govern.")
    from rfsafe.verification import state_of

    if any(state_of(e["limit_verification"]) in ("partly", "not confirmed") for e in entries):
        warn("Caution: rows marked '?' (not confirmed) or 'P' (partly read) have not been checked "
             "against the published text in full; check them there before relying on them.")


def limits_command(*args, **kwargs) -> None:
    """Errors name what the user typed: STANDARD, FREQ_MHZ (the arguments) or --compare."""
    from rfsafe.errors import InputError

    try:
        _limits_command(*args, **kwargs)
    except InputError as err:
        head, sep, rest = str(err).partition(": ")
        user = {"standard": "STANDARD",
                "freq_mhz": "--compare" if kwargs.get("compare") is not None else "FREQ_MHZ"}.get(head)
        raise (InputError(f"{user}: {rest}") if sep and user else err) from None


def _limits_command(
    standard: Optional[str] = typer.Argument(None, metavar="STANDARD",
                                             help="fcc, icnirp2020, icnirp1998, ieee2019, sc6 or eu1999."),
    freqs_mhz: Optional[list[str]] = typer.Argument(None, metavar="FREQ_MHZ...",
                                                    help="Frequencies [MHz]."),
    compare: Optional[str] = typer.Option(None, "--compare", metavar="FREQ_MHZ",
                                          help="Show every standard side by side at this frequency [MHz]."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON (a list of entries) instead of a table."),
    wide: bool = typer.Option(False, "--wide", help="Do not fit the table to 100 columns."),
) -> None:
    from rfsafe.cli.output import print_json, set_wide, warn

    set_wide(wide)
    from rfsafe.errors import InputError, bad_value
    from rfsafe.limits import STANDARD_IDS, standard_info

    known = ", ".join(f'"{s}"' for s in STANDARD_IDS)
    if compare is not None:
        if standard is not None or freqs_mhz:
            raise InputError("--compare: takes one frequency and no STANDARD "
                             "(use either `rfsafe limits STANDARD FREQ_MHZ...` or "
                             "`rfsafe limits --compare FREQ_MHZ`)")
        (f_mhz,) = _parse_freqs([compare])
        entries, skipped = [], []
        for sid in STANDARD_IDS:
            info = standard_info(sid)
            if info.freq_min_hz <= f_mhz * 1e6 <= info.freq_max_hz:
                entries.extend(_entries(sid, f_mhz))
            else:
                skipped.append(f"{sid} ({info.freq_min_hz / 1e6:g} to {info.freq_max_hz / 1e6:g} MHz)")
        if not entries:
            raise bad_value("--compare", int(f_mhz) if f_mhz.is_integer() else f_mhz, "is outside the range of every standard "
                            f"({', '.join(skipped)})")
        for s in skipped:
            warn(f"Not covered at {f_mhz:g} MHz: {s}")
        title = f"Exposure limits at {f_mhz:g} MHz, all standards"
    else:
        if standard is None:
            raise InputError(f"standard: missing; give one of {known} and one or more "
                             "frequencies in MHz, or --compare FREQ_MHZ")
        if standard not in STANDARD_IDS:
            raise bad_value("standard", standard, f"is not a known standard (known: {known})")
        if not freqs_mhz:
            raise InputError("freq_mhz: missing; give one or more frequencies in MHz, "
                             f"e.g. rfsafe limits {standard} 14.2 144.2")
        entries = [e for f in _parse_freqs(freqs_mhz) for e in _entries(standard, f)]
        info = standard_info(standard)
        title = f"{info.name} ({info.edition})"
    if json_out:
        print_json(entries)
    else:
        from rfsafe.cli.output import fit_text

        typer.echo(fit_text(_table(entries, title)))
        _cautions(entries)
    raise typer.Exit(0)


def register(app: typer.Typer) -> None:
    """Add the ``limits`` command to the rfsafe app."""
    import functools

    app.command("limits", help=_HELP)(functools.wraps(_limits_command)(limits_command))
