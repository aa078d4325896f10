"""Test-wide settings: Qt renders offscreen (with no display and no platform set, the Qt fixture aborts)."""

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("MIXTYPE_SETTINGS_DIR", "")

# Property tests draw the same examples on every run, so a CI result does not depend on the day's luck;
# set HYPOTHESIS_RANDOM=1 to explore new examples locally. No clock either: a loaded machine must not turn a
# slow example into a failure (no per-example deadline, no "too slow" health check).
from hypothesis import HealthCheck, settings

_RANDOM = bool(os.environ.get("HYPOTHESIS_RANDOM"))
settings.register_profile("mixtype", derandomize=not _RANDOM, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow],
                          **({} if _RANDOM else {"database": None}))
settings.load_profile("mixtype")
