"""A Landau fan of an invented gapped 2D Dirac material, from Python.

Invented parameters (no real material): Dirac velocity 4.0e5 m/s, half gap 12 meV. The levels
of a massive 2D Dirac Hamiltonian H = hbar v (kx sx + ky sy) + Delta sz are, for the charge -e
of the built-in model and n >= 1,
    E_n = +/- sqrt(Delta^2 + 2 n (hbar v)^2 / l_B^2),
with one unpaired level at +/-Delta (the sign set by the valley and the field's sign)
(closed form from memory; e.g. the graphene review of Castro Neto et al., Rev. Mod. Phys. 81,
109 (2009), for Delta = 0). The script computes the fan from 0.5 T to 10 T, checks the first
levels against that formula at every field (tolerance scaled by the level spacing), and plots
the fan with matplotlib when it is installed (fan_invented.png), else prints the numbers.

Run: python python/examples/fan_invented.py
"""

import numpy as np

import ladderfan as lf

HBAR_J_S = 1.054571817e-34  # CODATA 2018
E_C = 1.602176634e-19  # CODATA 2018 (exact)

velocity = 4.0e5  # m/s, invented
delta = 12.0  # meV, invented
model = lf.builtin("dirac2d", velocity_m_per_s=velocity, mass_mev=delta)
fields = np.linspace(0.5, 10.0, 20)
fan = lf.fan(model, fields, cutoff=120)

# closed form at every field: hbar v / l_B in meV with l_B = sqrt(hbar / (e B))
hv_over_lb = HBAR_J_S * velocity * np.sqrt(E_C * fields / HBAR_J_S) / E_C * 1e3
worst = 0.0
for n in range(1, 6):
    expected = np.sqrt(delta**2 + 2 * n * hv_over_lb**2)
    for sign in (+1, -1):
        rows = np.nonzero((fan.landau_index == n) & np.array(
            [b.startswith("upper" if sign > 0 else "lower") for b in fan.branch]))[0]
        assert len(rows) == 1, (n, sign, list(fan.label))
        e = fan.energy[rows[0]] + fan.reference_energy
        spacing = np.sqrt(delta**2 + 2 * (n + 1) * hv_over_lb**2) - expected
        dev = np.abs(e - sign * expected) / spacing
        assert np.all(dev < 1e-6), (n, sign, dev.max())
        worst = max(worst, float(dev.max()))

# the unpaired level sits at -Delta for this valley, charge and field sign, at every field
zero = np.nonzero(fan.landau_index == 0)[0]
assert len(zero) == 1, list(fan.label)
assert np.all(np.abs(fan.energy[zero[0]] + fan.reference_energy + delta) < 1e-9 * delta)

try:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
except ImportError:
    plt = None

if plt is not None:
    fig, ax = plt.subplots(figsize=(6, 4))
    for row in range(len(fan)):
        ax.plot(fan.values, fan.energy[row], lw=0.8, color="k")
    ax.set_xlabel("B [T]")
    ax.set_ylabel("E [meV]")
    ax.set_ylim(-80, 80)
    ax.set_title("invented gapped Dirac film: Landau fan")
    fig.savefig("fan_invented.png", dpi=120)
    print("wrote fan_invented.png")
else:
    print("B [T]  " + "  ".join(f"LL {lab:>4}" for lab in fan.label[:8]))
    for j, b in enumerate(fan.values):
        print(f"{b:5.2f}  " + "  ".join(f"{e:8.3f}" for e in fan.energy[:8, j]))
print(f"levels n = 1..5, both branches, agree with the closed form at all {len(fields)} fields "
      f"(worst deviation {worst:.1e} of the level spacing)")
