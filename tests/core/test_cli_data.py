"""The command line with background data and templates: --data, --template, templates, pockets, trade readouts,
and projects that record their data files."""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import pytest

from core.cli.options import parse_data_option
from core.equations.templates import list_templates, load_template
from core.project.io import load_project
from core.project.model import demo_project_names, demo_project_path
from tests.core.cli_runner import run, run_json

DATA = Path(__file__).resolve().parents[2] / "resources" / "demo" / "data"
NPZ, VTU = str(DATA / "bump_flow.npz"), str(DATA / "bump_flow.vtu")
CSV, NETCDF = str(DATA / "stratification_profile.csv"), str(DATA / "stratification_profile.nc")
VTU_AS_UV = VTU + ":velocity_x=u,velocity_y=v"
# The demo profile's formula without its roughness (resources/demo/make_data.py, stratification()).
PROFILE = "N=0.011*exp(-((z + 120)/35)**2) + 0.0016*exp(z/900)*(1 - exp(z/15))"
# Above the crest of the bump, away from the data cells the bump cuts: the sonic pocket's upper part.
ABOVE_CREST = ("--domain", "-0.8", "0.8", "1.08", "1.4", "--grid", "129", "65", "--raw")




# -- --data PATH[:NAMES] ---------------------------------------------------------------------------------
def test_data_option_syntax(tmp_path):
    assert parse_data_option("flow.vtu") == ("flow.vtu", None)
    assert parse_data_option("flow.vtu:velocity_x=u, velocity_y = v") == ("flow.vtu", {"velocity_x": "u",
                                                                                       "velocity_y": "v"})
    assert parse_data_option("cast.csv:N") == ("cast.csv", {"N": "N"})
    assert parse_data_option("C:\\data\\cast.csv") == ("C:\\data\\cast.csv", None)
    assert parse_data_option("dir:with:colons/cast.csv") == ("dir:with:colons/cast.csv", None)
    odd = tmp_path / "name:N"           # an existing file is always a plain path
    odd.write_text("")
    assert parse_data_option(str(odd)) == (str(odd), None)


@pytest.mark.parametrize("data", [NPZ, VTU_AS_UV], ids=["npz", "vtu"])
def test_bump_flow_from_data_classifies_like_the_formula(data):
    # the demo files hold the full_potential template's default flow (checked in test_data_sources); from data
    # the types differ only where interpolation moves the sonic line, within a few nodes of the grid
    formula = run_json("classify", "--template", "full_potential", *ABOVE_CREST)
    sampled = run_json("classify", "--template", "full_potential", "--data", data, *ABOVE_CREST)
    nodes = 129 * 65
    for label in ("elliptic", "hyperbolic", "undefined"):
        assert abs(sampled["fractions"][label] - formula["fractions"][label]) * nodes <= 6, label
    assert formula["fractions"]["hyperbolic"] * nodes > 700              # a real pocket is compared
    (exact,), (found,) = formula["pockets"], sampled["pockets"]
    assert abs(found["area"] - exact["area"]) <= 6 * (1.6 / 128) * (0.32 / 64)
    assert found["bounding_box"] == pytest.approx(exact["bounding_box"], abs=1e-12)
    assert sampled["data"][0]["path"] == data.split(":")[0] and sampled["data"][0]["quantities"] == ["u", "v"]


@pytest.mark.parametrize("data", [CSV + ":N", NETCDF + ":N2"], ids=["csv", "netcdf"])
def test_stratification_from_data_classifies_like_the_formula_profile(data):
    # a profile of N (or N^2, with N = sqrt(N2) from the template) against the formula it was sampled from,
    # plus 3 % roughness: the turning depths where N = w move by less than 2 grid rows (2 m each)
    grid = ("--grid", "31", "251", "--raw")
    formula = run_json("classify", "--template", "internal_waves", "--let", PROFILE, *grid)
    sampled = run_json("classify", "--template", "internal_waves", "--data", data, *grid)
    assert sampled["variables"] == ["x", "z"] and sampled["domain"] == [0.0, 3000.0, -500.0, 0.0]
    assert abs(sampled["fractions"]["hyperbolic"] - formula["fractions"]["hyperbolic"]) <= 2 / 251
    assert formula["fractions"]["elliptic"] > 0.5 and formula["fractions"]["hyperbolic"] > 0.2
    (exact,), (found,) = formula["pockets"], sampled["pockets"]
    assert found["bounding_box"][2:] == pytest.approx(exact["bounding_box"][2:], abs=2 * 2.0 + 1e-9)
    assert found["touches_boundary"] and found["peak"]["quantity"] == "N"


def test_bad_data_files_exit_2_with_one_line(tmp_path):
    inline = ("classify", "--template", "full_potential", "--grid", "11", "--raw")
    status, out, err = run(*inline, "--data", str(tmp_path / "absent.npz"))
    assert status == 2 and out == "" and err == f"mixtype: --data: {tmp_path / 'absent.npz'}: no such file\n"
    broken = tmp_path / "broken.npz"
    broken.write_bytes(b"PK\x03\x04 not really an archive")
    status, _, err = run(*inline, "--data", str(broken))
    assert status == 2 and err.count("\n") == 1 and err.startswith(f"mixtype: --data: {broken}")
    status, _, err = run(*inline, "--data", VTU + ":pressure=p")
    assert status == 2 and err.count("\n") == 1 and "missing quantity 'pressure'" in err
    status, _, err = run(*inline, "--data", NPZ, "--data", NPZ)
    assert status == 2 and "quantity 'u' is in both" in err


def test_an_inline_equation_reads_data_by_name_and_hints_when_it_is_missing():
    # a = 200 - u with c = 1: D = 4 (u - 200) > 0 over the bump's crest, where the demo flow is faster than
    # 200 m/s (about 363 m/s)
    inline = ("--a", "200 - u", "--b", "0", "--c", "1", "--domain", "-3", "3", "1", "3", "--grid", "61", "21")
    document = run_json("probe", *inline, "--data", NPZ, "--at", "0", "1.05")
    assert document["type"] == "hyperbolic" and document["data"][0]["quantities"] == ["u", "v"]
    status, _, err = run("probe", *inline, "--at", "0", "1.05")
    assert status == 2 and err == ("mixtype: --a: unknown name 'u' (column 7) (if it is a data quantity, give its "
                                   "file with --data)\n")


# -- templates -----------------------------------------------------------------------------------------------
def test_templates_lists_every_template_with_its_title():
    status, out, err = run("templates")
    assert status == 0 and err == ""
    lines = out.splitlines()
    assert [line.split()[0] for line in lines] == list(list_templates())
    assert all(load_template(line.split()[0]).title in line for line in lines)
    assert "(data: u, v)" in lines[list(list_templates()).index("full_potential")]
    document = run_json("templates")
    entry = next(t for t in document["templates"] if t["name"] == "internal_waves")
    assert entry["variables"] == ["x", "z"] and entry["data_quantities"] == ["N", "N2"]
    assert entry["trade"] == ["internal_wave"] and entry["peak_quantity"] == "N"


def test_a_template_starts_the_equation_and_inline_options_override_it():
    # Tricomi (y - y0) u_xx + u_yy = 0: hyperbolic below y = y0 (closed form); default domain [-1, 1]^2
    default = run_json("classify", "--template", "tricomi", "--grid", "21", "--raw")
    assert default["domain"] == [-1.0, 1.0, -1.0, 1.0]
    assert default["fractions"]["hyperbolic"] == pytest.approx(10 / 21)
    shifted = run_json("classify", "--template", "tricomi", "--param", "y0=0.5", "--grid", "21", "--raw")
    assert shifted["fractions"]["hyperbolic"] == pytest.approx(15 / 21)
    flipped = run_json("classify", "--template", "tricomi", "--a=y0 - y", "--domain", "-1", "1", "0", "1",
                       "--grid", "11", "--raw")
    assert flipped["domain"] == [-1.0, 1.0, 0.0, 1.0] and flipped["fractions"]["hyperbolic"] == pytest.approx(10 / 11)
    status, _, err = run("classify", "--template", "no_such_thing")
    assert status == 2 and err.startswith("mixtype: --template: no template named 'no_such_thing' (available: ")
    status, _, err = run("classify", str(demo_project_path("tricomi")), "--template", "tricomi")
    assert status == 2 and "cannot be combined with FILE" in err


def test_a_template_refuses_two_data_quantities_for_one_definition():
    status, _, err = run("classify", "--template", "internal_waves", "--data", CSV, "--grid", "5", "--raw")
    assert status == 2 and err.count("\n") == 1 and "both stand for 'N'" in err


# -- pockets in classify ------------------------------------------------------------------------------------
def test_classify_reports_the_supersonic_pocket_and_its_peak_mach_number():
    box = ("--domain", "-1", "1", "0.9", "1.6", "--grid", "161", "57", "--raw")
    document = run_json("classify", "--template", "full_potential", "--data", VTU_AS_UV, *box)
    pocket = document["pockets"][0]                                  # largest first
    assert len(document["pockets"]) <= 3 and all(p["area"] < 0.01 for p in document["pockets"][1:])
    assert pocket["centroid"][0] == pytest.approx(0.0, abs=0.01) and 1.0 < pocket["centroid"][1] < 1.19
    # the pocket rests on the wall, which crosses the box's lower edge y = 0.9 (as the formula's does)
    assert pocket["touches_boundary"] and pocket["peak"]["quantity"] == "M"
    # peak at the crest: q = 2 U for the flow past a circle (potential flow, common practice, no source) with the
    # isentropic sound speed c^2 = c0^2 - (gamma - 1)/2 q^2 (energy equation behind NACA Report 1135, 1953)
    gamma, c0, mach = 1.4, 340.3, 0.55
    free = mach * c0 / math.sqrt(1 + (gamma - 1) / 2 * mach**2)
    crest = 2 * free / math.sqrt(c0**2 - (gamma - 1) / 2 * (2 * free) ** 2)
    assert 1.0 < pocket["peak"]["value"] <= crest + 1e-9 and math.isfinite(pocket["peak"]["value"])
    assert pocket["peak"]["value"] == pytest.approx(crest, rel=1e-3)        # the mesh has nodes on the wall
    formula = run_json("classify", "--template", "full_potential", *box)
    assert formula["pockets"][0]["peak"]["value"] == pytest.approx(crest, rel=1e-9)   # the crest is a node
    assert formula["pockets"][0]["peak"]["at"] == pytest.approx([0.0, 1.0], abs=1e-12)
    status, out, _ = run("classify", "--template", "full_potential", "--data", VTU_AS_UV, *box)
    assert status == 0 and "hyperbolic pockets: " in out and "peak M = " in out and f"data {VTU}: u, v" in out


def test_an_equation_without_hyperbolic_nodes_has_no_pockets():
    document = run_json("classify", "--a", "1", "--b", "0", "--c", "1", "--domain", "0", "1", "0", "1",
                        "--grid", "5", "--raw")
    assert document["pockets"] == [] and "data" not in document


# -- trade readouts in probe ---------------------------------------------------------------------------------
def test_probe_reads_the_mach_angle_and_characteristics_off_the_flow():
    document = run_json("probe", "--template", "full_potential", "--at", "0.2", "1.1")
    trade, units = document["trade"], document["trade_units"]
    mach = trade["mach"]
    assert mach > 1 and units["mach"] == "dimensionless" and units["mach_angle_deg"] == "deg"
    # Mach angle mu = arcsin(1/M) (NACA Report 1135, 1953)
    assert trade["mach_angle_deg"] == pytest.approx(math.degrees(math.asin(1 / mach)), abs=1e-10)
    # the flow at the point, in closed form: potential flow past a circle of radius R = 1 (common practice)
    x, y = 0.2, 1.1
    gamma, c0, free_mach = 1.4, 340.3, 0.55
    free = free_mach * c0 / math.sqrt(1 + (gamma - 1) / 2 * free_mach**2)
    r2 = x * x + y * y
    u, v = free * (1 - (x * x - y * y) / r2**2), -2 * free * x * y / r2**2
    assert trade["flow_angle_deg"] == pytest.approx(math.degrees(math.atan2(v, u)), abs=1e-9)
    assert mach == pytest.approx(math.hypot(u, v) / math.sqrt(c0**2 - (gamma - 1) / 2 * (u * u + v * v)), rel=1e-12)
    # the full potential equation's characteristics run at flow angle +- Mach angle (common practice, no source):
    # the same directions as the probe's roots of a dy^2 - b dx dy + c dx^2 = 0, as lines (modulo 180 deg)
    expected = sorted((trade[k] % 180.0) for k in ("characteristic_plus_deg", "characteristic_minus_deg"))
    assert sorted(document["directions_deg"]) == pytest.approx(expected, abs=1e-9)
    assert expected == pytest.approx(sorted(((trade["flow_angle_deg"] + s * trade["mach_angle_deg"]) % 180.0)
                                            for s in (1, -1)), abs=1e-9)
    status, out, _ = run("probe", "--template", "full_potential", "--at", "0.2", "1.1")
    assert status == 0 and f"{trade['mach_angle_deg']:.9g} (deg)" in out and "(dimensionless)" in out


def test_probe_of_a_subsonic_point_says_the_mach_angle_does_not_exist():
    document = run_json("probe", "--template", "full_potential", "--at", "-2.5", "1.0", "--data", NPZ)
    assert document["trade"]["mach"] < 1 and document["trade"]["mach_angle_deg"] is None
    status, out, _ = run("probe", "--template", "full_potential", "--at", "-2.5", "1.0", "--data", NPZ)
    assert status == 0 and "does not exist here (deg)" in out


def test_probe_of_the_pins_of_a_data_demo_carries_trade_readouts():
    from core.data.sources import load_data

    document = run_json("probe", str(demo_project_path("thermocline_csv_profile")))
    thermocline, deep, mixed = document["pins"]
    assert thermocline["trade"]["in_window"] == 1.0 and deep["trade"]["in_window"] == 0.0
    assert mixed["trade"]["ray_slope"] is None
    assert thermocline["trade_units"]["ray_angle_deg"] == "deg from the horizontal"
    # internal-wave rays: |dz/dx| = sqrt((w^2 - f^2)/(N^2 - w^2)) where f < w < N (Gill 1982, Atmosphere-Ocean
    # Dynamics), with N read from the cast at the pin
    n = float(load_data(CSV, variables=("x", "z")).sample("N", *thermocline["point"]))
    w, f = 0.002, 1e-4
    assert thermocline["trade"]["ray_slope"] == pytest.approx(math.sqrt((w * w - f * f) / (n * n - w * w)),
                                                              rel=1e-12)
    assert thermocline["trade"]["ray_angle_deg"] == pytest.approx(
        math.degrees(math.atan(thermocline["trade"]["ray_slope"])), rel=1e-12)
    assert document["data"][0]["quantities"] == ["N"]


# -- projects with data on the command line ------------------------------------------------------------------
@pytest.mark.parametrize("name", [n for n in demo_project_names() if load_project(demo_project_path(n)).data_sources])
def test_data_demos_pass_check_and_classify_with_both_types(name):
    status, out, err = run("check", str(demo_project_path(name)))
    assert status == 0 and err == "" and ", 1 data file; " in out
    document = run_json("classify", str(demo_project_path(name)), "--grid", "61", "--raw")
    assert document["fractions"]["elliptic"] > 0.2 and document["fractions"]["hyperbolic"] > 0.001
    assert document["pockets"] and document["pockets"][0]["peak"] is not None


def _saved_study(tmp_path, monkeypatch) -> Path:
    """classify with --data and --save-project from tmp/, the data in tmp/data, the project in tmp/projects."""
    (tmp_path / "data").mkdir()
    (tmp_path / "projects").mkdir()
    shutil.copy(NPZ, tmp_path / "data" / "bump.npz")
    monkeypatch.chdir(tmp_path)
    status, out, err = run("classify", "--template", "full_potential", "--data", "data/bump.npz", *ABOVE_CREST,
                           "--save-project", "projects/study.mixtype.json")
    assert status == 0 and err == "" and out.endswith("as a project in projects/study.mixtype.json (with 1 data "
                                                      "file)\n")
    return tmp_path / "projects" / "study.mixtype.json"


def test_a_saved_project_records_its_data_relative_to_itself_and_checks_from_anywhere(tmp_path, monkeypatch):
    path = _saved_study(tmp_path, monkeypatch)
    project = load_project(path)
    (source,) = project.data_sources
    assert source.path == "../data/bump.npz" and source.names == {}
    assert project.shown()[0].peak_quantity == "M" and "u" not in project.shown()[0].definitions
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    status, out, err = run("check", str(path), "--allow-outside-data")
    assert status == 0 and err == "" and ", 1 data file; " in out
    checked = run_json("check", str(path), "--allow-outside-data")
    assert checked["data"] == {"files": 1, "quantities": ["u", "v"], "problems": [], "changed": []}
    again = run_json("classify", str(path), "--allow-outside-data")
    inline = run_json("classify", "--template", "full_potential", "--data", str(tmp_path / "data" / "bump.npz"),
                      *ABOVE_CREST)
    assert again["fractions"] == inline["fractions"] and again["pockets"] == inline["pockets"]
    # the file's data plus inline data: a second quantity file joins the first
    np.savez(tmp_path / "extra.npz", x=np.linspace(-3, 3, 7), y=np.linspace(0, 3, 4), w=np.ones((4, 7)))
    probed = run_json("probe", str(path), "--allow-outside-data", "--data", str(tmp_path / "extra.npz"), "--at", "0", "1.1", "--b", "w - 1")
    assert probed["coefficients"]["b"] == pytest.approx(0.0, abs=1e-12)
    assert [d["quantities"] for d in probed["data"]] == [["u", "v"], ["w"]]


def test_missing_data_exit_2_and_changed_data_warn(tmp_path, monkeypatch):
    path = _saved_study(tmp_path, monkeypatch)
    data = tmp_path / "data" / "bump.npz"
    moved = tmp_path / "bump.npz"
    data.rename(moved)
    problem = f"{path}: $.data_sources[0]: file '../data/bump.npz' is missing (looked in {data})"
    status, out, err = run("check", str(path), "--allow-outside-data")
    assert status == 2 and out.startswith(f"{path}: valid, format version 6") and err == f"mixtype: {problem}\n"
    assert run("check", str(path), "--allow-outside-data", "--json")[0] == 2
    status, out, err = run("classify", str(path), "--allow-outside-data")
    assert status == 2 and out == "" and err == f"mixtype: {problem}\n"
    # a changed file: a warning, and the new values are used
    with np.load(moved) as arrays:
        np.savez(data, x=arrays["x"], y=arrays["y"], u=0.5 * arrays["u"], v=0.5 * arrays["v"])
    status, out, err = run("check", str(path), "--allow-outside-data")
    assert status == 0 and err.startswith(f"mixtype: warning: {path}: $.data_sources[0]: file '../data/bump.npz' "
                                          "has changed since the project was saved (checksum recorded ")
    status, out, err = run("classify", str(path), "--json", "--allow-outside-data")
    assert status == 0 and err.count("\n") == 1 and "warning" in err
    assert json.loads(out)["fractions"]["hyperbolic"] == 0.0          # at half the speed the flow is subsonic


def test_rays_traced_through_a_data_profile_cross_the_waveguide_as_the_ray_integral_says():
    # along an internal-wave ray dx/dz = sqrt((N^2 - w^2)/(w^2 - f^2)) (Gill 1982), so between the turning depths
    # a ray advances by the integral of that over z; computed here with scipy's quad on the same cast
    from scipy.integrate import quad

    from core.data.sources import load_data

    document = run_json("trace", str(demo_project_path("thermocline_csv_profile")))
    cast = load_data(CSV, variables=("x", "z"))
    w, f = 0.002, 1e-4

    def run_per_rise(z: float) -> float:
        n = float(cast.sample("N", 0.0, z))
        return math.sqrt(max(n * n - w * w, 0.0) / (w * w - f * f))

    (seed,) = document["seeds"]
    for curve in seed["curves"]:
        points = np.array(curve["points"])
        assert curve["ends"] == ["type_change", "type_change"]
        z_low, z_high = points[:, 1].min(), points[:, 1].max()
        advance, _ = quad(run_per_rise, z_low, z_high, limit=400, points=list(np.arange(-180.0, -55.0, 5.0)))
        assert np.ptp(points[:, 0]) == pytest.approx(advance, rel=1e-3)
        assert -185 < z_low < -175 and -62 < z_high < -55          # the turning depths where N = w
