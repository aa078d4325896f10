#!/usr/bin/env bash
# Proves the wheel: build it from a clean copy of the source, install it into a fresh venv, and run the
# installed `mixtype` from outside the repository (so nothing is imported from the checkout):
#   mixtype --version, mixtype templates, mixtype classify --template full_potential --grid 64 --json,
#   a headless render and report of the bundled demo, a batch of it on two worker processes, the bundled user guide, and the window's one-line refusal when there is no display.
# Fails on any wrong output. Run alone from anywhere: bash .ci/wheel_smoke.sh
# WHEEL_SMOKE_VENV=DIR reuses (or creates) that venv instead of a fresh one, for quicker local reruns.
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
PYTHON="${PYTHON:-python}"
WORK="$(mktemp -d "${TMPDIR:-/tmp}/mixtype-wheel-smoke.XXXXXX")"
trap 'rm -rf "$WORK"' EXIT
START=$SECONDS
step() { echo "wheel smoke [$((SECONDS - START)) s]: $*"; }
fail() { echo "wheel smoke FAILED: $*" >&2; exit 1; }

step "building the wheel from a clean copy of $ROOT"
mkdir "$WORK/source"
tar -C "$ROOT" --exclude=.git --exclude=./build --exclude=./dist --exclude='*.egg-info' \
    --exclude=__pycache__ --exclude=.pytest_cache --exclude=.hypothesis --exclude=.ruff_cache \
    --exclude=.benchmarks -cf - . | tar -C "$WORK/source" -xf -
"$PYTHON" -m pip wheel --quiet --no-deps -w "$WORK/dist" "$WORK/source"
WHEEL="$(ls "$WORK"/dist/mixtype-*.whl)"
step "built $(basename "$WHEEL") ($(( $(stat -c %s "$WHEEL") / 1024 )) KiB)"

VENV="${WHEEL_SMOKE_VENV:-$WORK/venv}"
[ -x "$VENV/bin/python" ] || "$PYTHON" -m venv "$VENV"
"$VENV/bin/python" -m pip install --quiet --force-reinstall --no-deps "$WHEEL"
"$VENV/bin/python" -m pip install --quiet "$WHEEL"   # its dependencies (from the pip cache when present)
step "installed into $VENV"

cd "$WORK"
unset PYTHONPATH
MIXTYPE="$VENV/bin/mixtype"
CHECK="$VENV/bin/python"

EXPECTED_VERSION="$(sed -n 's/^__version__ = "\(.*\)"$/\1/p' "$ROOT/core/__init__.py")"
[ "$("$MIXTYPE" --version)" = "mixtype $EXPECTED_VERSION" ] || fail "mixtype --version is not $EXPECTED_VERSION"

"$MIXTYPE" templates > templates.txt
grep -q '^full_potential ' templates.txt || fail "mixtype templates does not list full_potential: $(cat templates.txt)"
step "templates: $(wc -l < templates.txt) listed"

"$MIXTYPE" classify --template full_potential --grid 64 --json > classify.json
"$CHECK" - classify.json <<'EOF' || fail "classify --template full_potential gave unexpected JSON"
import json, math, sys
document = json.load(open(sys.argv[1], encoding="utf-8"))
fractions = document["fractions"]
assert document["grid"] == [64, 64], document["grid"]
assert math.isclose(sum(fractions.values()), 1.0, abs_tol=1e-12), fractions
assert fractions["elliptic"] > 0.5 and fractions["hyperbolic"] > 0, fractions  # a supersonic pocket
EOF
step "classify: fractions $("$CHECK" -c 'import json; print(json.load(open("classify.json"))["fractions"])')"

DEMO="$("$CHECK" -c 'from core.project.model import demo_project_path; print(demo_project_path())')"
case "$DEMO" in "$ROOT"/*) fail "the demo was found in the checkout ($DEMO), not in the installed package";; esac
"$MIXTYPE" render "$DEMO" --out map.png --size 640 480 > render.txt 2>render.err \
    || fail "render failed: $(cat render.err)"
"$CHECK" - map.png <<'EOF' || fail "render did not write a proper PNG"
import struct, sys
data = open(sys.argv[1], "rb").read()
assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
width, height = struct.unpack(">II", data[16:24])
assert 200 <= width <= 640 and 200 <= height <= 480, (width, height)  # the map within a 640 x 480 window
assert len(data) > 10_000, len(data)  # a drawn map, not an empty canvas
EOF
step "render: $(basename "$DEMO") -> map.png ($(stat -c %s map.png) bytes)"

"$MIXTYPE" report "$DEMO" --out report.pdf > report.txt 2>report.err || fail "report failed: $(cat report.err)"
"$CHECK" - report.pdf <<'EOF' || fail "report did not write a proper PDF"
import re, sys
data = open(sys.argv[1], "rb").read()
assert data[:5] == b"%PDF-" and data.rstrip().endswith(b"%%EOF"), "not a whole PDF"
assert len(re.findall(rb"/Type\s*/Page\b", data)) >= 3, "too few pages"
EOF
step "report: $(basename "$DEMO") -> report.pdf ($(stat -c %s report.pdf) bytes)"

# batch from the installed copy: its worker processes start from the installed script and package
"$MIXTYPE" batch "$DEMO" "$DEMO" --out batch --workers 2 --json > batch.json 2> batch.err \
    || fail "batch failed: $(cat batch.err)"
"$MIXTYPE" classify "$DEMO" --json > demo_classify.json
DEMO_NAME="$(basename "$DEMO" .mixtype.json)"
cmp -s "batch/$DEMO_NAME.json" demo_classify.json && cmp -s "batch/$DEMO_NAME-2.json" demo_classify.json \
    || fail "batch results differ from mixtype classify $DEMO --json"
step "batch: 2 jobs of $(basename "$DEMO") on 2 worker processes, both equal to classify"

GUIDE="$("$CHECK" -c 'from gui.help import guide_path; print(guide_path())')"
case "$GUIDE" in "$ROOT"/*) fail "the user guide was found in the checkout ($GUIDE), not in the installed package";; esac
grep -q 'id="caution"' "$GUIDE" || fail "the installed user guide ($GUIDE) is missing or incomplete"
step "user guide: $GUIDE"

if [ "$(uname -s)" = Linux ]; then
  status=0
  env -u DISPLAY -u WAYLAND_DISPLAY -u QT_QPA_PLATFORM "$MIXTYPE" > window.out 2> window.err || status=$?
  [ "$status" = 2 ] && [ "$(wc -l < window.err)" = 1 ] && grep -q 'the window cannot start' window.err \
      || fail "without a display mixtype should exit 2 with one line, got $status: $(cat window.err)"
  step "no display: $(cat window.err)"
fi
step "passed"
