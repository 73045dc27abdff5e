"""`screener init-config PATH`: a commented starter configuration that loads as written."""

from __future__ import annotations

import json
import os

from ..errors import ConfigError

STARTER = '''\
# screener configuration: one recurring screening (e.g. run nightly from cron with
#   screener run --config THIS_FILE --quiet --fail-on-act).
# Relative paths are taken from this file's folder.  Unknown keys are errors.
# Results are advisory: they do not replace your procedures, the official screening
# service, local regulation or licensed practice.

[run]
name = "nightly"
start = "today"              # "today" = 00:00 UTC of the run day, "now", or ISO 8601 UTC
window_days = 3.0
workers = 2                  # local processes
# dask_scheduler = "tcp://scheduler-host:8786"   # run the tasks on a Dask cluster instead
max_elset_age_days = 7.0     # older element sets are screened but flagged
strict = false               # true: stop at the first bad record instead of skipping it
max_input_drop = 0.5         # warn when the catalog or fleet has shrunk by more than half
fail_on_input_drop = false   # true: refuse to screen then (exit 2; nothing stored)

[fleet]
# Own spacecraft: element sets (TLE, OMM KVN/XML/CSV/JSON) and CCSDS OEM ephemerides.
# An OEM replaces the element set of the same object.  Leave empty for catalog-vs-catalog.
files = {fleet}
default_radius_m = 5.0       # circumscribing-sphere radius; HBR = sum of both objects' radii

# [fleet.objects."900000001"]
# radius_m = 6.5
# maneuverable = true

[catalog]
sources = {catalog}          # files or folders; the newest element set per object wins
default_radius_m = 5.0

[volume]
shape = "sphere"             # sphere | ellipsoid | box (RIC of the primary)
radius_km = 5.0
# ric_km = [1.0, 10.0, 2.0]   # half-sizes R, I, C for ellipsoid and box

[covariance]
# Preference: OEM covariance > configured here > fitted from element-set history >
# an assumed regime model (Pc then labelled "assumed covariance").
use_history = true
# [covariance.objects."900000001"]
# sigma_rtn_km = [0.02, 0.10, 0.02]
# growth_rtn_km_per_day = [0.005, 0.05, 0.005]
# [covariance.regimes.LEO]
# sigma_rtn_km = [0.1, 0.5, 0.15]
# growth_rtn_km_per_day = [0.05, 1.0, 0.05]

[thresholds]
act_pc = 1e-4                # default (common practice): plan a response
watch_pc = 1e-5              # default (common practice): follow closely

[events]
tca_tolerance_s = 600.0      # same pair, TCAs this close across runs: one event

[outputs]
folder = "screener-out"      # per-run exports go to FOLDER/run-<id>/
json = true
csv = true
cdm = "act"                  # CDM files for events at: none | act | watch | all
cdm_per = "series"           # one CDM per series (its worst pass) | per "encounter"
report = "html"              # html (self-contained, plots) | text | none

# [store]
# path = "screener.sqlite"   # default: $SCREENER_STORE or $XDG_DATA_HOME/screener/store.sqlite

# [received]
# folder = "inbox"           # received CDMs (KVN or XML) taken in at the start of each run
# tca_diff_s = 10.0          # disagreement with our own screening: TCA apart by more than this,
# miss_diff_km = 1.0         # ... miss by more than this,
# pc_factor = 10.0           # ... or Pc by more than this factor

# Alerts after each run (`screener alert-test --config THIS_FILE` sends a test through all).
# An event told of once is told again by the same rule only when it escalates.
# [alerts.mail]
# host = "smtp.example.org"
# port = 587
# from = "screener@example.org"
# user = "screener"
# password_env = "SCREENER_SMTP_PASSWORD"   # or password_file = "..." (mode 0600); never here
# starttls = "when_offered"                 # | "required" | "never"
#
# [[alerts.rule]]
# name = "act-to-duty"
# on = "act"                 # act | escalation | tca_within | run_problem
# mail_to = ["duty@example.org"]
# command = ["./notify-duty", "--team", "fd"]   # argv (never a shell string); JSON on stdin
# timeout_s = 30             # the command is killed after this
# pc_factor = 10.0           # an event told of is told again when its Pc grows by this factor
#
# [[alerts.rule]]
# name = "close-in"
# on = "tca_within"
# hours = 24                 # an act event whose TCA is less than this ahead
# mail_to = ["duty@example.org"]
#
# [[alerts.rule]]
# name = "run-problems"
# on = "run_problem"         # the run failed, or inputs shrank, or objects were unusable
# mail_to = ["ops@example.org"]
'''


def write_starter(path: str, fleet: list[str] | None = None, catalog: list[str] | None = None,
                  force: bool = False) -> None:
    if os.path.exists(path) and not force:
        raise ConfigError(f"{path} exists; not overwriting it (use --force)")

    here = os.path.dirname(os.path.abspath(path))

    def rel(x: str) -> str:
        """A path given on the command line (relative to the working folder) as the
        configuration reads it: relative to the configuration's own folder."""
        if not os.path.exists(x):
            raise ConfigError(f"{x}: no such file or folder (init-config writes only paths that exist)")
        return os.path.relpath(os.path.abspath(x), here)

    def lst(xs):
        return "[" + ", ".join(json.dumps(x) for x in xs) + "]"

    text = STARTER.format(fleet=lst([rel(x) for x in fleet] if fleet else ["fleet.json"]),
                          catalog=lst([rel(x) for x in catalog] if catalog else ["catalog.tle"]))
    try:
        os.makedirs(here, exist_ok=True)
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(text)
    except OSError as exc:
        raise ConfigError(f"cannot write {path}: {exc.strerror}") from None
