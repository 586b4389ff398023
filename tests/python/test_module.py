"""The Python module against the command line: the same figures as `probe --json` and
`link --json`, a run's file read with h5py (dimension labels), tune as `tune --json`, the CLI's
error messages as heraldry.InputError, and Ctrl-C during a run.

Run through ctest (PYTHONPATH = the build's python folder, HERALDRY_BINARY = the executable,
HERALDRY_SOURCE_DIR = the source tree)."""

import json
import math
import os
import pathlib
import re
import signal
import subprocess
import sys
import time

import h5py
import numpy as np
import pytest

import heraldry

SOURCE = pathlib.Path(os.environ.get("HERALDRY_SOURCE_DIR", pathlib.Path(__file__).resolve().parents[2]))
BINARY = os.environ.get("HERALDRY_BINARY", str(SOURCE / "build" / "heraldry"))
DEMO = SOURCE / "protocols" / "demo.toml"

# A cold line at three distances, a bare link and a one-sided tap: a run of a few seconds at most.
LINE = """title = "python line"
[source]
frequency_ghz = 6
squeezing_db = 4
bandwidth_mhz = 1
[link]
medium = "line"
distance_m = [10, 40, 80]
[link.line]
loss_db_per_m = 0.02
temperature_k = 1.0
[counters.c]
kind = "threshold"
efficiency = 0.7
dark_per_gate = 1e-3
[[protocol]]
name = "bare"
steps = ["link"]
[[protocol]]
name = "tap b"
steps = ["link", { tap = "b", transmissivity = TAP, counter = "c" }]
[numerics]
tolerance = 1e-8
"""


def cli(*args, check=True):
    p = subprocess.run([BINARY, *map(str, args)], capture_output=True, text=True)
    if check:
        assert p.returncode == 0, p.stderr
    return p


def same(a, b, tol=1e-12):
    """Equal within tol (relative, or absolute near zero); strings and None exactly."""
    if a is None or b is None or isinstance(a, str) or isinstance(b, str):
        return a == b
    return math.isclose(a, b, rel_tol=tol, abs_tol=tol)


def test_import_and_scenario():
    assert heraldry.__version__
    sc = heraldry.Scenario.from_file(str(DEMO))
    assert sc.protocols[0] == "bare"
    assert sc.target_m == 50.0
    assert isinstance(sc.distances_m, np.ndarray) and sc.distances_m.size > 1
    same_text = heraldry.Scenario.from_string(DEMO.read_text())
    assert same_text.title == sc.title
    assert heraldry.Scenario.demo().title == sc.title


def test_probe_equals_the_cli_json_for_the_demo_at_50_m():
    expected = json.loads(cli("probe", DEMO, "--at", 50, "--json").stdout)
    got = heraldry.Scenario.from_file(str(DEMO)).probe(at=50.0)
    assert same(got["distance_m"], expected["distance_m"])
    assert got["input"].keys() == expected["input"].keys()
    for k in expected["input"]:
        assert same(got["input"][k], expected["input"][k]), k
    assert [p["name"] for p in got["protocols"]] == [p["name"] for p in expected["protocols"]]
    for g, e in zip(got["protocols"], expected["protocols"]):
        assert g.keys() == e.keys()
        for k in e:
            assert same(g[k], e[k]), (e["name"], k, g[k], e[k])
    # The fields are the library's list of figures, the datasets of a protocol in the result file.
    names = [f["name"] for f in heraldry.result_fields()]
    assert list(got["protocols"][0].keys()) == ["name"] + names


def test_probe_pins_a_swept_parameter_as_the_cli_set_does():
    pin = "subtract both:tap_b.transmissivity=0.9"
    expected = json.loads(cli("probe", DEMO, "--at", 30, "--json", "--set", pin).stdout)
    sc = heraldry.Scenario.from_file(str(DEMO))
    for pins in ([pin], {"subtract both:tap_b.transmissivity": 0.9}):
        got = sc.probe(at=30.0, set=pins)
        g = next(p for p in got["protocols"] if p["name"] == "subtract both")
        e = next(p for p in expected["protocols"] if p["name"] == "subtract both")
        assert same(g["log_negativity"], e["log_negativity"])


def test_link_columns_equal_the_cli_json():
    expected = json.loads(cli("link", DEMO, "--json").stdout)
    sc = heraldry.Scenario.from_file(str(DEMO))
    got = sc.link()
    assert list(got.keys()) == list(expected["columns"].keys())
    for name, values in expected["columns"].items():
        assert isinstance(got[name], np.ndarray) and got[name].dtype == np.float64
        assert got[name].tolist() == values, name  # 17 digits: the same doubles
    assert sc.link_units() == expected["units"]
    # A loss in dB is -10 log10 of the transmissivity (definition of the decibel).
    total = sum(got[c] for c in ("beam_dB", "air_dB", "rain_dB", "iface_dB", "spill_dB", "ohmic_dB", "match_dB", "line_dB"))
    np.testing.assert_allclose(10 ** (-total / 10), got["tau_b"], rtol=1e-9)


def test_run_writes_a_file_with_labelled_dimensions(tmp_path):
    sc = heraldry.Scenario.from_string(LINE.replace("TAP", "0.9"), "line.toml")
    out = tmp_path / "line.h5"
    path = sc.run(output=str(out), threads=1)
    assert path == str(out) and out.exists()
    with h5py.File(out, "r") as f:
        groups = {f["protocols"][k].attrs["name"]: f["protocols"][k] for k in f["protocols"]}
        assert set(groups) == {"bare", "tap b"}
        ds = groups["tap b"]["log_negativity"]
        assert ds.shape == (3,)
        assert ds.dims[0].label == "distance_m"
        assert ds.dims[0][0][()].tolist() == [10.0, 40.0, 80.0]
        # The figures equal probe's at the same distance (the same evaluation).
        pr = sc.probe(at=40.0)
        tap = next(p for p in pr["protocols"] if p["name"] == "tap b")
        assert ds[1] == tap["log_negativity"]
        # The bare protocol is the link itself: its E_N is the Gaussian E_N (truncation tolerance 1e-8).
        bare = groups["bare"]["log_negativity"][()]
        np.testing.assert_allclose(bare, sc.link()["E_N"], rtol=1e-7)
    # An existing result is refused without force, with the CLI's message.
    with pytest.raises(heraldry.InputError, match="pass --force to overwrite it"):
        sc.run(output=str(out), threads=1)
    assert sc.run(output=str(out), threads=1, force=True) == str(out)


def test_tune_equals_the_cli_json(tmp_path):
    text = LINE.replace("TAP", "{ tune = [0.5, 0.99] }")
    f = tmp_path / "tune.toml"
    f.write_text(text)
    expected = json.loads(cli("tune", f, "--protocol", "tap b", "--objective", "log-negativity", "--at", 40, "-t", 1, "--json").stdout)
    got = heraldry.Scenario.from_string(text).tune(protocol="tap b", objective="log-negativity", at=40.0, threads=1)
    assert got["feasible"] == expected["feasible"]
    assert got["evaluations"] == expected["evaluations"]
    assert same(got["optimum"], expected["optimum"])
    assert same(got["parameters"][0]["value"], expected["parameters"][0]["value"])
    for k in expected["figures"]:
        assert same(got["figures"][k], expected["figures"][k]), k


@pytest.mark.parametrize("name", sorted(p.name for p in (SOURCE / "tests" / "bad_scenarios").glob("*.toml")))
def test_bad_scenarios_raise_input_error_with_the_cli_message(name):
    path = SOURCE / "tests" / "bad_scenarios" / name
    p = cli("check", path, check=False)
    assert p.returncode == 2
    prefix = "heraldry: error: "
    message = p.stderr.strip()
    assert message.startswith(prefix)
    with pytest.raises(heraldry.InputError) as info:
        heraldry.Scenario.from_file(str(path))
    assert isinstance(info.value, ValueError)
    assert str(info.value) == message[len(prefix):]


def test_a_bad_option_raises_input_error():
    sc = heraldry.Scenario.from_file(str(DEMO))
    with pytest.raises(heraldry.InputError, match="--set"):
        sc.probe(at=50.0, set=["no such protocol:x=1"])
    with pytest.raises(heraldry.InputError, match="--objective"):
        sc.tune(protocol="subtract both", objective="speed")
    with pytest.raises(ValueError, match="--at"):
        sc.probe(at=-1.0)


def test_ctrl_c_stops_a_run_and_keeps_the_checkpoint(tmp_path):
    out = tmp_path / "demo.h5"
    script = (
        "import heraldry, sys\n"
        f"sc = heraldry.Scenario.from_file({str(DEMO)!r})\n"
        "try:\n"
        f"    sc.run(output={str(out)!r}, threads=1)\n"
        "except KeyboardInterrupt:\n"
        "    print('interrupted', flush=True)\n"
        "    sys.exit(130)\n"
        "print('finished')\n"
    )
    proc = subprocess.Popen([sys.executable, "-c", script], stdout=subprocess.PIPE, text=True, env=os.environ.copy())
    time.sleep(1.5)
    t0 = time.monotonic()
    proc.send_signal(signal.SIGINT)
    stdout, _ = proc.communicate(timeout=60)
    waited = time.monotonic() - t0
    assert proc.returncode == 130, stdout
    assert "interrupted" in stdout
    assert not out.exists()
    assert (tmp_path / "demo.h5.partial").exists()
    print(f"Ctrl-C answered in {waited:.2f} s")


def test_the_notebook_is_valid_nbformat_4_and_its_code_compiles():
    nb = json.loads((SOURCE / "docs" / "demo_notebook.ipynb").read_text())
    assert nb["nbformat"] == 4
    code = [c for c in nb["cells"] if c["cell_type"] == "code"]
    assert code
    for i, cell in enumerate(code):
        assert cell["outputs"] == [] and "execution_count" in cell
        compile("".join(cell["source"]), f"cell {i}", "exec")
    text = "".join("".join(c["source"]) for c in code)
    for call in ("Scenario.from_file", ".link()", ".probe(", ".run(", ".tune(", "dims["):
        assert call in text, call


def test_ctrl_c_stops_tune():
    # The three-parameter case of the tune benchmark: several seconds of evaluations.
    text = DEMO.read_text()
    swept = "transmissivity = { from = 0.86, to = 0.98, points = 5 }"
    assert swept in text
    text = text.replace(swept, "transmissivity = { tune = [0.5, 0.99] }")
    text = text.replace('{ tap = "a", transmissivity = 0.95, counter = "lab" },\n         { tap = "b"',
                        '{ tap = "a", transmissivity = { tune = [0.5, 0.99] }, counter = "lab" },\n         { tap = "b"', 1)
    text = re.sub(r"(?m)^squeezing_db = .*$", "squeezing_db = { tune = [3, 10] }", text, count=1)
    script = (
        "import heraldry, sys\n"
        f"sc = heraldry.Scenario.from_string({text!r})\n"
        "print('tuning', flush=True)\n"
        "try:\n"
        "    sc.tune(protocol='subtract both', objective='log-negativity', at=50.0, threads=1)\n"
        "except KeyboardInterrupt:\n"
        "    print('interrupted', flush=True)\n"
        "    sys.exit(130)\n"
        "print('finished', flush=True)\n"
    )
    proc = subprocess.Popen([sys.executable, "-c", script], stdout=subprocess.PIPE, text=True, env=os.environ.copy())
    assert proc.stdout.readline().strip() == "tuning"
    time.sleep(0.5)
    t0 = time.monotonic()
    proc.send_signal(signal.SIGINT)
    rest, _ = proc.communicate(timeout=60)
    assert proc.returncode == 130, rest
    assert "interrupted" in rest
    print(f"Ctrl-C during tune answered in {time.monotonic() - t0:.2f} s")
