"""Every CSV file the command line writes loads with numpy and pandas as it is.

Runs every command that writes files (small cutoffs) into a temporary directory, then loads
EVERY CSV found there with ``numpy.genfromtxt(f, delimiter=',', names=True)`` and
``pandas.read_csv(f)``, with no further arguments, and checks the column names and the shape
(rows, columns) against the sidecar ``NAME.meta.json`` written beside each file.

The binary: ``LADDERFAN_BIN`` if set, else ``target/debug/ladderfan`` or
``target/release/ladderfan`` of this repository (or of ``CARGO_TARGET_DIR``).
"""

import json
import os
import pathlib
import subprocess

import numpy
import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]

# (arguments, directory name); every command gets --out DIR. Parameters are the built-ins'
# defaults (invented where the README says so); small cutoffs keep the run short.
COMMANDS = [
    (["levels", "--builtin", "dirac2d", "--count", "6", "--cutoff", "24"], "levels"),
    (["levels", "--builtin", "dirac", "--field", "0.5", "--count", "6", "--cutoff", "24"], "levels-natural"),
    (["fan", "--builtin", "dirac2d", "--points", "4", "--b-max", "5", "--cutoff", "24"], "fan"),
    (["dispersion", "--builtin", "pauli", "--points", "4", "--cutoff", "24"], "dispersion"),
    (["dispersion", "--builtin", "dirac", "--field", "0.5", "--points", "3", "--cutoff", "24"], "dispersion-natural"),
    (["converge", "--builtin", "dirac2d", "--cutoffs", "8,16,24"], "converge"),
    (["converge", "--builtin", "dirac2d", "--mode", "auto", "--count", "4"], "converge-auto"),
    (["dos", "--builtin", "dirac2d", "--density-cm2", "1e11", "--b-max", "6", "--points", "3",
      "--cutoff", "24"], "dos"),
    (["dos", "--builtin", "weyl", "--field", "10", "--kz-integrate", "--width", "1",
      "--energy-points", "21", "--density-cm3", "1e16", "--b-min", "5", "--b-max", "10",
      "--points", "2", "--emin", "-20", "--emax", "20", "--cutoff", "100"], "dos3d"),
    (["optics", "--builtin", "dirac2d", "--cutoff", "24"], "optics"),
    (["optics", "--builtin", "dirac2d", "--b-max", "6", "--points", "3", "--cutoff", "24"], "optics-fan"),
    (["models"], "models"),
    (["demo"], "demo"),
    (["orbits", "--builtin", "schrodinger", "--set", "mass_ratio=0.1", "--density", "1e12",
      "--field", "2", "--levels", "3"], "orbits"),
]

SHARD_SWEEP = ["fan", "--builtin", "dirac2d", "--points", "6", "--b-max", "5", "--cutoff", "24"]

EXPECTED_FILES = {
    "levels.csv", "fan.csv", "dispersion.csv", "converge.csv", "converge-auto.csv", "dos.csv",
    "fermi.csv", "dos3d.csv", "fermi3d.csv", "transitions.csv", "models.csv",
    "orbits_levels.csv", "orbits_fan.csv",
}


def find_binary():
    given = os.environ.get("LADDERFAN_BIN")
    if given:
        return pathlib.Path(given)
    targets = [ROOT / "target"]
    if os.environ.get("CARGO_TARGET_DIR"):
        targets.insert(0, pathlib.Path(os.environ["CARGO_TARGET_DIR"]))
    for t in targets:
        for profile in ("debug", "release"):
            p = t / profile / "ladderfan"
            if p.is_file():
                return p
    pytest.fail("no ladderfan binary: run `cargo build` or set LADDERFAN_BIN")


def run(binary, args):
    r = subprocess.run([str(binary), *args], capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, f"ladderfan {' '.join(args)} failed: {r.stderr}"


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    """Run every command once; return the CSV files written."""
    binary = find_binary()
    root = tmp_path_factory.mktemp("files")
    for args, name in COMMANDS:
        run(binary, [*args, "--out", str(root / name)])
    shards = []
    for k in (1, 2):
        d = root / f"shard{k}"
        run(binary, [*SHARD_SWEEP, "--shard", f"{k}/2", "--out", str(d)])
        shards.append(str(d / "fan.csv"))
    (root / "merged").mkdir()
    run(binary, ["merge", str(root / "merged" / "fan.csv"), *shards])
    files = sorted(root.rglob("*.csv"))
    assert EXPECTED_FILES <= {f.name for f in files}, [f.name for f in files]
    return files


def sidecar(path):
    return json.loads(path.with_name(path.stem + ".meta.json").read_text())


def data_rows(path):
    return len(path.read_text().splitlines()) - 1


def test_every_csv_loads_with_numpy_genfromtxt(written):
    for f in written:
        meta = sidecar(f)
        names = [c["name"] for c in meta["columns"]]
        table = numpy.atleast_1d(numpy.genfromtxt(f, delimiter=",", names=True))
        assert list(table.dtype.names) == names, f
        assert table.shape == (data_rows(f),), f
        # the level energy and the field are numbers in every row that has them
        for c in meta["columns"]:
            if c["name"].startswith(("energy_", "field_")):
                assert numpy.isfinite(table[c["name"]]).all(), (f, c["name"])


def test_every_csv_loads_with_pandas_read_csv(written):
    pandas = pytest.importorskip("pandas")
    for f in written:
        meta = sidecar(f)
        names = [c["name"] for c in meta["columns"]]
        frame = pandas.read_csv(f)
        assert list(frame.columns) == names, f
        assert frame.shape == (data_rows(f), len(names)), f


def test_energy_and_field_columns_are_found_by_prefix(written):
    # a reader that looks a quantity up by prefix keeps working whatever the unit
    levels = [f for f in written if f.name == "levels.csv"]
    units = set()
    for f in levels:
        head = f.read_text().splitlines()[0].split(",")
        energy = [c for c in head if c.startswith("energy_")]
        assert len(energy) == 1, head
        units.add(energy[0])
    assert units == {"energy_meV", "energy_mc2"}, units
