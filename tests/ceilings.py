"""The one time limit the tests use: a ceiling that only a hang reaches, never a guess at how long work takes.

Tests wait for events (a job's result, a signal, a condition, a child process ending), not for a clock. The
ceiling only turns a hang into a failure instead of a suite that never ends; a loaded machine is far below it.
"""

__all__ = ["HANG_CEILING_MS", "HANG_CEILING_S"]

HANG_CEILING_S = 300.0
HANG_CEILING_MS = int(HANG_CEILING_S * 1000)    # the same ceiling for pytest-qt (milliseconds)
