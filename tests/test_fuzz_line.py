"""Fuzz: `rfsafe line` with malformed and extreme options keeps rfsafe's promise (tests/fuzz_support.py).

Every failure the fuzz ever found is kept below as an explicit case.
"""

from __future__ import annotations

import pytest
from hypothesis import example, given
from hypothesis import strategies as st

from fuzz_support import FUZZ, check_promise, run_cli

OPTIONS = ("--pep-w", "--freq-mhz", "--length-m", "--cable", "--z0-ohm", "--loss-db-per-100m", "--vf",
           "--max-voltage-v-peak", "--swr", "--load-ohm", "--tuner", "--tuner-at", "--q", "--inductor-q",
           "--capacitor-v-peak", "--inductor-a-rms", "--l-form", "--connector", "--connector-v-peak",
           "--duty-factor", "--exact-z0", "--json", "--swr/--load-ohm", "ARGUMENTS", "COMMAND",
           "--connector-at-transmitter", "--connector-at-antenna", "--balun", "--nope", "-x")

NUMBERS = ["0", "-0", "1", "-1", "1e-300", "5e-324", "1e300", "1e309", "-1e309", "inf", "-inf", "nan", "NaN",
           "1.0000001", "0.9999999", "1e6", "1e-6", "50", "100", "3", "abc", "", " ", "1,5", "0x10", "1_000",
           "٣", "1e", "+5", "--json"]
IMPEDANCES = ["50", "0", "0+0j", "0-1e6j", "1e-12", "1e-12+1e12j", "73+42.5j", "12-35j", "50j", "-50", "inf",
              "nan+1j", "1e308+1e308j", "600-j900", "j", "abc", "50+-3j", "1e400", " 50 ", "50 + 3j"]
CABLES = ["rg-213", "rg-58", "window-450", "open-wire-600", "twinlead-300", "rg-174", "nope", "", "RG-213"]

numbers = st.sampled_from(NUMBERS) | st.floats(allow_nan=True, allow_infinity=True).map(repr)


@st.composite
def line_args(draw):
    args = ["line"]
    required = {"--pep-w": draw(numbers), "--freq-mhz": draw(numbers | st.sampled_from(["14.2", "1.8", "28"])),
                "--length-m": draw(numbers | st.sampled_from(["0", "30", "1e5"]))}
    for k, v in required.items():
        if draw(st.integers(0, 9)):  # mostly present
            args += [k, v]
    if draw(st.booleans()):
        args += ["--cable", draw(st.sampled_from(CABLES))]
    else:
        for k in ("--z0-ohm", "--loss-db-per-100m", "--vf"):
            if draw(st.integers(0, 5)):
                args += [k, draw(numbers | st.sampled_from(["50", "0.66", "1.5"]))]
    end = draw(st.integers(0, 3))
    if end in (0, 3):
        args += ["--swr", draw(numbers | st.sampled_from(["1", "1e6", "1e12"]))]
    if end in (1, 3):
        args += ["--load-ohm", draw(st.sampled_from(IMPEDANCES) | st.text(max_size=12))]
    if draw(st.booleans()):
        args += ["--tuner", draw(st.sampled_from(["l", "pi", "t", "x", ""]))]
        for k in ("--tuner-at", "--q", "--inductor-q", "--capacitor-v-peak", "--inductor-a-rms", "--l-form"):
            if draw(st.integers(0, 3)) == 0:
                args += [k, draw(numbers | st.sampled_from(["antenna", "transmitter", "low-pass", "high-pass"]))]
    for k in ("--connector", "--connector-v-peak", "--duty-factor", "--max-voltage-v-peak"):
        if draw(st.integers(0, 4)) == 0:
            args += [k, draw(numbers | st.sampled_from(["uhf", "n", "bnc", "sma"]))]
    if draw(st.booleans()):
        args.append("--exact-z0")
    if draw(st.integers(0, 20)) == 0:
        args.append(draw(st.sampled_from(["--nope", "extra", "-x", "--pep-w"])))
    args.append("--json")
    return args


def _check(args):
    code, out, err, seconds = run_cli(args)
    check_promise(args, code, out, err, seconds, fields=OPTIONS)


@FUZZ
@given(line_args())
def test_line_option_mutations(args):
    _check(args)


@FUZZ
@given(st.sampled_from(["1", "1.0000001", "2", "1e3", "1e6"]), st.sampled_from(IMPEDANCES),
       st.sampled_from(["0", "1e-9", "0.5", "30", "1e5"]), st.sampled_from(CABLES[:5]),
       st.sampled_from([None, "l", "pi"]), st.sampled_from(["1e-9", "1", "1e3", "1e8"]))
def test_line_extreme_loads_lengths_powers(swr, load, length, cable, tuner, pep):
    base = ["line", "--pep-w", pep, "--freq-mhz", "7.1", "--length-m", length, "--cable", cable, "--json"]
    _check(base + ["--swr", swr])
    _check(base + ["--load-ohm", load] + (["--tuner", tuner] if tuner else []))


@pytest.mark.parametrize("args, message", [
    (["line", "--pep-w", "abc"], 'Error: --pep-w: "abc" is not a number (accepted: a number such as 100, 0.5 or 1e3)'),
    (["line", "--pep-w", "1", "--freq-mhz"], "Error: --freq-mhz: needs a value (see --help)"),
    (["line", "--exact-z0=3"], "Error: --exact-z0: takes no value (it is a switch) (see --help)"),
])
def test_parser_errors_name_the_option(args, message):
    code, out, err, _ = run_cli(args)
    assert (code, out, err) == (2, "", message + "\n")
