"""Test-wide settings: Qt renders offscreen (with no display and no platform set, the Qt fixture aborts)."""

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("MIXTYPE_SETTINGS_DIR", "")
