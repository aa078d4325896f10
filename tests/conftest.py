"""Test-wide settings: Qt renders offscreen (with no display and no platform set, the Qt fixture aborts)."""

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("MIXTYPE_SETTINGS_DIR", "")

# Property tests draw the same examples on every run, so a CI result does not depend on the day's luck;
# set HYPOTHESIS_RANDOM=1 to explore new examples locally.
from hypothesis import settings

settings.register_profile("mixtype", derandomize=not os.environ.get("HYPOTHESIS_RANDOM"))
settings.load_profile("mixtype")
