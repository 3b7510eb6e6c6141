"""The Python module against the command line (bit for bit), closed forms, errors, shapes.

The command line is found through the environment variable LADDERFAN_BIN (CI sets it to the
binary it built), else at target/debug/ladderfan of this repository.
"""

import json
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest

import ladderfan as lf

REPO = Path(__file__).resolve().parents[2]
DATA = REPO / "tests" / "data"

# CODATA 2018: Bohr magneton mu_B = 5.7883818060e-2 meV/T, so hbar omega_c = hbar e B / m_e
# = 2 mu_B B for the free-electron mass.
MU_B_MEV_PER_T = 5.7883818060e-2


def _binary():
    env = os.environ.get("LADDERFAN_BIN")
    path = Path(env) if env else REPO / "target" / "debug" / "ladderfan"
    if not path.is_file():
        pytest.skip(f"no ladderfan binary at {path}; set LADDERFAN_BIN (CI does)")
    return str(path)


def _cli(*args, expect_ok=True):
    r = subprocess.run([_binary(), *args], capture_output=True, text=True, timeout=600)
    if expect_ok:
        assert r.returncode == 0, r.stderr
    return r


def _bits(x):
    return np.asarray(x, dtype=np.float64).view(np.uint64)


# --- bit for bit against the command line --------------------------------------------------


def test_spectrum_equals_cli_bit_for_bit_builtin():
    # invented parameters: a light, small-g conduction band
    args = ["--builtin", "pauli", "--set", "mass_ratio=0.067", "--set", "g_factor=-0.44",
            "--field", "3", "--cutoff", "40"]
    cli = json.loads(_cli("levels", *args, "--count", "0", "--show-unconverged", "--json").stdout)
    m = lf.builtin("pauli", mass_ratio=0.067, g_factor=-0.44)
    s = lf.spectrum(m, field=3, cutoff=40)
    cli_levels = sorted(cli["levels"], key=lambda lv: (lv["energy"], lv["sector"]))
    order = sorted(range(len(s)), key=lambda i: (s.energy[i], s.sector[i]))
    assert len(cli_levels) == len(s) == 80
    assert np.array_equal(_bits([lv["energy"] for lv in cli_levels]), _bits(s.energy[order]))
    assert np.array_equal(_bits([lv["bound"] for lv in cli_levels]), _bits(s.bound[order]))
    assert [lv["sector"] for lv in cli_levels] == list(s.sector[order])
    assert [lv["label"] for lv in cli_levels] == list(s.label[order])
    w = np.array([lv["weights"] for lv in cli_levels])
    assert np.array_equal(_bits(w), _bits(s.weights[order]))
    assert _bits(cli["reference_energy"]) == _bits(s.reference_energy)


def test_spectrum_equals_cli_bit_for_bit_model_file():
    path = DATA / "dirac_film.toml"
    cli = json.loads(
        _cli("levels", "--model", str(path), "--count", "0", "--show-unconverged", "--json").stdout
    )
    s = lf.spectrum(lf.load(path))  # field 4 T and cutoff 150 from the file's [defaults]
    assert s.field == 4.0 and s.cutoff == 150
    cli_e = np.sort(np.array([lv["energy"] for lv in cli["levels"]]))
    assert np.array_equal(_bits(cli_e), _bits(np.sort(s.energy)))


def test_toml_string_and_overrides():
    text = (DATA / "dirac_film.toml").read_text()
    a = lf.spectrum(lf.load_toml(text, name="film"), cutoff=60)
    b = lf.spectrum(lf.load(DATA / "dirac_film.toml"), cutoff=60)
    assert np.array_equal(_bits(a.energy), _bits(b.energy))
    # an override of a [parameters] entry, as `--set delta=9` (invented value)
    c = lf.spectrum(lf.load_toml(text, name="film", delta=9.0), cutoff=60)
    assert np.min(np.abs(c.energy + c.reference_energy - 9.0)) < 1e-9 * 9.0 or \
        np.min(np.abs(c.energy + c.reference_energy + 9.0)) < 1e-9 * 9.0
    with pytest.raises(lf.LadderfanError, match=r"^film:\d+:\d+: "):
        lf.load_toml(text.replace("velocity = 5.0e5", "velocity = [1, 2]"), name="film")


def test_fan_equals_cli_bit_for_bit():
    m = lf.builtin("dirac2d")
    fan = lf.fan(m, [1.0, 2.0, 3.0], cutoff=60)
    cli = json.loads(
        _cli("fan", "--builtin", "dirac2d", "--b-min", "1", "--b-max", "3", "--points", "3",
             "--cutoff", "60", "--json").stdout
    )
    assert list(fan.values) == cli["values"] == [1.0, 2.0, 3.0]
    mine = {t: fan.energy[i] for i, t in enumerate(fan.track)}
    compared = 0
    for t in cli["tracks"]:  # the command line keeps the tracks of its energy window
        e = np.array([np.nan if x is None else x for x in t["energies"]])
        assert np.array_equal(_bits(e), _bits(mine[t["track"]])), t["label"]
        compared += 1
    assert compared >= 5


def test_dos_and_optics_equal_cli_bit_for_bit():
    dos_args = ["--builtin", "schrodinger", "--field", "2", "--cutoff", "40", "--emin", "0",
                "--emax", "0.45", "--energy-points", "50", "--width", "0.005",
                "--density-cm2", "1e11", "--json"]
    cli = json.loads(_cli("dos", *dos_args).stdout)
    d = lf.dos(lf.builtin("schrodinger"), field=2, cutoff=40, emin=0, emax=0.45, points=50,
               width=0.005, density_cm2=1e11)
    curve = np.array(cli["dos"])
    assert np.array_equal(_bits(curve[:, 0]), _bits(d.energy))
    assert np.array_equal(_bits(curve[:, 1]), _bits(d.dos))
    assert _bits(cli["fermi"]["fermi_energy"]) == _bits(d.fermi["fermi_energy"])
    cli = json.loads(
        _cli("optics", "--builtin", "pauli", "--field", "2", "--cutoff", "40",
             "--density-cm2", "1e11", "--json").stdout
    )
    o = lf.optics(lf.builtin("pauli"), 2.0, cutoff=40, density_cm2=1e11)
    tr = cli["points"][0]["transitions"]
    assert len(tr) == len(o) >= 1
    assert np.array_equal(_bits([t["energy"] for t in tr]), _bits(o.energy))
    assert np.array_equal(_bits([t["strength_plus"] for t in tr]), _bits(o.strength_plus))
    assert [t["from"] for t in tr] == list(o.from_label)


def test_converge_equals_cli_bit_for_bit():
    cli = json.loads(
        _cli("converge", "--builtin", "dirac2d", "--field", "2", "--cutoffs", "20,40,80",
             "--count", "4", "--json").stdout
    )["study"]
    c = lf.converge(lf.builtin("dirac2d"), [20, 40, 80], field=2, count=4)
    e = np.array([[np.nan if x["energy"] is None else x["energy"] for x in lv["entries"]]
                  for lv in cli["levels"]])
    assert e.shape == c.energy.shape == (4, 3)
    assert np.array_equal(_bits(e), _bits(c.energy))


# --- closed forms checked from Python -------------------------------------------------------


def test_schrodinger_closed_form():
    # E_n = hbar omega_c (n + 1/2), omega_c = e B / m*  (L. Landau, Z. Phys. 64, 629 (1930))
    ratio, field = 0.2, 2.5
    s = lf.spectrum(lf.builtin("schrodinger", mass_ratio=ratio), field=field, cutoff=60)
    hw = 2 * MU_B_MEV_PER_T * field / ratio
    e = np.sort(s.energy[s.converged])[:30]
    expected = hw * (np.arange(30) + 0.5)
    assert np.all(np.abs(e - expected) <= 1e-9 * hw), np.max(np.abs(e - expected)) / hw
    assert np.array_equal(s.landau_index[np.argsort(s.energy)][:30], np.arange(30))


def test_verify_formula_and_callable_pass_and_fail():
    m = lf.builtin("schrodinger")
    hw = 2 * MU_B_MEV_PER_T * 2.0  # hbar omega_c at 2 T for m* = m_e (Landau 1930, CODATA 2018)
    by_callable = lf.verify(m, lambda n, s: hw * (n + 0.5), n=range(10), field=2, cutoff=40)
    assert by_callable.passed and bool(by_callable), by_callable.line
    assert list(by_callable.n) == list(range(10))
    assert np.all(np.abs(by_callable.deviation) <= by_callable.allowed)
    by_formula = lf.verify(m, "2*mu_B*B*(n + 1/2)", n=range(10), field=2, cutoff=40)
    assert by_formula.passed, by_formula.line
    wrong = lf.verify(m, lambda n, s: 1.01 * hw * (n + 0.5), n=range(10), field=2, cutoff=40)
    assert not wrong.passed and wrong.outcome == "fail", wrong.line


def test_optics_cyclotron_resonance():
    # Kohn's theorem: the only dipole line of a parabolic band is hbar omega_c
    # (W. Kohn, Phys. Rev. 123, 1242 (1961)), here with filling factor 1 (one level full)
    ratio, field = 0.5, 4.0
    o = lf.optics(lf.builtin("schrodinger", mass_ratio=ratio), field, cutoff=40, filling=1.0)
    hw = 2 * MU_B_MEV_PER_T * field / ratio
    strong = o.relative_strength > 1e-6
    assert strong.sum() >= 1
    assert np.all(np.abs(o.energy[strong] - hw) <= 1e-9 * hw)


def test_dos_counts_the_landau_degeneracy():
    # each Landau level holds |qB|/h states per area (common practice); with spin degeneracy 2
    # of the built-in Schrodinger model, the DOS integrates to 2 eB/h per level
    s = lf.dos(lf.builtin("schrodinger"), field=2.0, cutoff=40, emin=0.0, emax=0.45,
               points=4001, width=0.005)
    assert s.energy.shape == s.dos.shape == (4001,)
    area = np.sum(0.5 * (s.dos[1:] + s.dos[:-1]) * np.diff(s.energy))
    e_over_h_cm2 = 1.602176634e-19 / 6.62607015e-34 * 1e-4  # CODATA 2018 exact: per T cm^2
    assert abs(area - 2 * 2 * e_over_h_cm2 * 2.0) <= 1e-3 * area  # levels n = 0 and 1 inside
    assert abs(s.landau_degeneracy_cm2 - e_over_h_cm2 * 2.0) <= 1e-9 * s.landau_degeneracy_cm2


def test_export_matrix_has_the_spectrum():
    sp = pytest.importorskip("scipy.sparse")
    m = lf.builtin("dirac2d")
    h, states = lf.export_with_states(m, field=2.0, cutoff=30)
    assert sp.issparse(h) and h.shape == (60, 60) and states.shape == (60, 2)
    dense = h.toarray()
    assert np.allclose(dense, dense.conj().T, rtol=0, atol=1e-12 * np.abs(dense).max())
    s = lf.spectrum(m, field=2.0, cutoff=30)
    ev = np.linalg.eigvalsh(dense) - s.reference_energy
    scale = np.abs(dense).max()
    assert np.max(np.abs(np.sort(ev) - np.sort(s.energy))) <= 1e-10 * scale
    sector = lf.export(m, field=2.0, cutoff=30, sector="0:3")
    assert sector.shape[0] < 60 and sector.shape[0] == sector.shape[1]


def test_converge_shapes():
    c = lf.converge(lf.builtin("schrodinger"), [10, 20, 40], field=2.0, count=4)
    assert c.energy.shape == c.bound.shape == c.converged.shape == (4, 3)
    assert list(c.cutoffs) == [10, 20, 40]
    assert c.to_pandas().shape[0] == 12


# --- errors ----------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["unknown_parameter.toml", "syntax_error.toml", "non_hermitian.toml"])
def test_model_file_errors_carry_the_cli_message(name):
    path = DATA / "bad" / name
    r = _cli("levels", "--model", str(path), expect_ok=False)
    assert r.returncode == 2
    line = r.stderr.strip().splitlines()[-1]
    assert line.startswith("ladderfan: error: ")
    with pytest.raises(lf.LadderfanError) as e:
        lf.load(path)
    assert str(e.value) == line[len("ladderfan: error: "):]


def test_errors_raise_ladderfan_error():
    with pytest.raises(lf.LadderfanError, match="unknown built-in model 'nope'"):
        lf.builtin("nope")
    with pytest.raises(lf.LadderfanError, match="non-zero magnetic field"):
        lf.spectrum(lf.builtin("schrodinger"), field=0.0)
    with pytest.raises(lf.LadderfanError, match="has no parameter 'no_such_parameter'") as e:
        lf.builtin("schrodinger", no_such_parameter=1.0)
    r = _cli("levels", "--builtin", "schrodinger", "--set", "no_such_parameter=1.0",
             expect_ok=False)
    assert r.stderr.strip().splitlines()[-1] == f"ladderfan: error: {e.value}"
    with pytest.raises(lf.LadderfanError, match="cannot read model file"):
        lf.load(DATA / "does_not_exist.toml")
    assert issubclass(lf.LadderfanError, Exception)


def test_callable_exception_propagates():
    def broken(n, s):
        raise ZeroDivisionError("from the callable")

    with pytest.raises(ZeroDivisionError, match="from the callable"):
        lf.verify(lf.builtin("schrodinger"), broken, n=range(3), field=1, cutoff=20)


# --- shapes and dtypes -----------------------------------------------------------------------


def test_spectrum_columns_shapes_and_dtypes():
    s = lf.spectrum(lf.builtin("pauli"), field=1.0, cutoff=30)
    n = len(s)
    assert n == 60
    assert s.energy.dtype == np.float64 and s.energy.shape == (n,)
    assert s.bound.dtype == np.float64 and s.converged.dtype == bool
    assert s.landau_index.dtype == np.int64 and s.sector_class.dtype == np.int64
    assert s.weights.shape == (n, 2)
    assert np.allclose(s.weights.sum(axis=1), 1.0, rtol=0, atol=1e-12)
    assert np.all(np.diff(s.energy) >= 0)
    pd = pytest.importorskip("pandas")
    df = s.to_pandas()
    assert isinstance(df, pd.DataFrame) and len(df) == n
    assert {"energy_meV", "bound_meV", "landau_index", "converged"} <= set(df.columns)
    assert sum(c.startswith("weight_") for c in df.columns) == 2


def test_sweep_shapes_and_natural_units():
    d = lf.dispersion(lf.builtin("dirac"), kz_max=0.5, points=5, field=0.1, cutoff=30)
    assert d.swept == "kz" and d.values.shape == (5,)
    assert d.energy.shape == (len(d), 5) and d.energy.dtype == np.float64
    df = d.to_pandas()
    assert "kz_mc" in df.columns and "energy_mc2" in df.columns
    f = lf.fan(lf.builtin("schrodinger"), b_min=1, b_max=2, points=4, cutoff=20)
    assert "field_T" in f.to_pandas().columns and f.energy.shape[1] == 4


def test_readme_python_example_runs():
    # the README's "From Python" example, run as written (it must stay true)
    text = (REPO / "README.md").read_text()
    section = text.split("## From Python", 1)[1].split("\n## ", 1)[0]
    code = section.split("```python\n", 1)[1].split("```", 1)[0]
    scope = {}
    exec(compile(code, "README.md (From Python)", "exec"), scope)
    assert scope["v"].passed
    assert scope["h"].shape == (100, 100)
    assert list(scope["s"].label[scope["near"]]) == ["-3", "-2", "-1", "0", "+1", "+2", "+3"]


def test_solves_from_threads_give_the_same_bits():
    # the GIL is released during a solve: threads may call in parallel, results unchanged
    from concurrent.futures import ThreadPoolExecutor

    m = lf.builtin("dirac2d", mass_mev=3.0)  # invented mass term
    fields = [1.0, 2.0, 3.0, 4.0]
    serial = [lf.spectrum(m, field=b, cutoff=80).energy for b in fields]
    with ThreadPoolExecutor(max_workers=4) as pool:
        threaded = list(pool.map(lambda b: lf.spectrum(m, field=b, cutoff=80).energy, fields))
    for a, b in zip(serial, threaded):
        assert np.array_equal(_bits(a), _bits(b))
