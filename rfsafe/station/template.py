"""The commented starter station file written by ``rfsafe init``."""

STARTER_TOML = '''\
# rfsafe station file (TOML). Units are in the key names: _w watts, _m metres, _mhz MHz, _db dB.
# Validate with `rfsafe check FILE`, evaluate with `rfsafe evaluate FILE`; `rfsafe schema` prints
# the JSON Schema for editors. Every value below is an example: replace it with your own.

title = "Station RF exposure evaluation"
station = "My station"
evaluator = "Your name"
# evaluation_date = 2026-01-31      # TOML date; today's date is printed when absent
standard = "fcc"                    # fcc | icnirp2020 | icnirp1998 | ieee2019 | sc6 | eu1999
ground_reflection = "full"          # none (F=1) | typical (F=2.56) | full (F=4, conservative default)

[[transmitters]]
id = "hf-rig"
pep_w = 100.0                       # peak envelope power delivered into the feedline

[[feedlines]]
id = "coax"
cable = "rg-213"                    # a catalogue class (see `rfsafe line --help`) or "custom"
length_m = 20.0
connector_loss_db = 0.1
connector = "uhf"                   # uhf | n | bnc (optional)
# custom cables: cable = "custom", z0_ohm = 50.0, velocity_factor = 0.66, loss_db_per_100m = 2.5

[[antennas]]
id = "dipole"
kind = "half-wave-dipole"           # isotropic | short-dipole | half-wave-dipole | quarter-wave-vertical | beam | table | wire | other
# gain_dbi = 2.15                   # peak gain; the named kinds have their textbook gain by default
x_m = 0.0                           # east of the station origin
y_m = 0.0                           # north of the station origin
height_m = 10.0
azimuth_deg = 0.0                   # main-beam bearing, clockwise from north
use_pattern = false                 # true: gain toward each place from the pattern (peak gain is conservative)

[[configurations]]
id = "20m-ssb"
freq_mhz = 14.2
transmitter = "hf-rig"
feedline = "coax"
antenna = "dipole"
mode = "ssb"                        # cw | ssb | ssb-processed | fm | am | am-full | rtty | afsk | digital | carrier
swr = 1.5                           # SWR at the antenna, or load_r_ohm / load_x_ohm
# duty_factor = 0.2                 # overrides the mode's duty factor
# A schedule lowers the average power: declare one only if you keep to it in every averaging window.
# schedule = { on_minutes = 10.0, off_minutes = 10.0 }   # absent: continuous (conservative default)

[[places]]
label = "Back garden"
x_m = 8.0
y_m = 0.0
height_m = 1.5
environment = "uncontrolled"        # uncontrolled (general public) | controlled (informed persons)

[[places]]
label = "Operating position"
x_m = 5.0
y_m = 3.0
height_m = 4.0
environment = "controlled"
'''
