"""Make the bundled sample sets. Every set is INVENTED: no real lab, plant or sensor.

Run ``python sample_sets/generate.py`` to rebuild the CSV files byte for byte
(seeded generator; numbers are printed with fixed precision).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent


def thermistor(rng) -> str:
    """Fictional bench calibration of a thermistor probe: R against T, with per-point u."""
    T = np.repeat(np.linspace(-20.0, 80.0, 26), 2)
    # a smooth, invented resistance curve (ohm), roughly exponential in 1/T
    Tk = T + 273.15
    R = 10000.0 * np.exp(3450.0 * (1.0 / Tk - 1.0 / 298.15))
    u = 0.002 * R + 2.0                       # standard uncertainty grows with R
    R_obs = R + u * rng.normal(size=T.size)
    lines = ["probe_T [degC],resistance [ohm],u_resistance [ohm],probe_T [K]"]
    lines += [f"{t:.2f},{r:.3f},{uu:.3f},{t + 273.15:.2f}" for t, r, uu in zip(T, R_obs, u)]
    return "\n".join(lines) + "\n"


def furnace(rng) -> str:
    """Fictional pilot-furnace study: yield against temperature setting.

    A clear curved trend with noise and three outliers, so that a stiff curve
    misses the bend and a flexible one chases the outliers.
    """
    n = 60
    setting = np.sort(rng.uniform(640.0, 900.0, n))
    s = (setting - 770.0) / 130.0
    trend = 71.0 + 9.0 * s - 11.0 * s ** 2 + 3.5 * np.sin(2.6 * s)
    y = trend + rng.normal(scale=1.6, size=n)
    for i in (9, 31, 52):
        y[i] += rng.choice([-1, 1]) * rng.uniform(6.0, 9.0)
    batch = 1 + np.arange(n) // 4
    lines = ["setting [degC],yield [%],batch"]
    lines += [f"{a:.1f},{b:.2f},B{c:02d}" for a, b, c in zip(setting, y, batch)]
    return "\n".join(lines) + "\n"


def beam(rng) -> str:
    """Fictional load test of a small test beam: deflection against load, three
    replicate runs (zero offset: deflection is 0 at zero load)."""
    loads = np.linspace(0.5, 12.0, 16)
    rows = ["load [kN],deflection [mm],run"]
    for run in (1, 2, 3):
        d = 0.82 * loads + 0.0065 * loads ** 2 + rng.normal(scale=0.05, size=loads.size)
        rows += [f"{a:.2f},{b:.4f},{run}" for a, b in zip(loads, d)]
    return "\n".join(rows) + "\n"


def assay(rng) -> tuple[str, str]:
    """Fictional assay calibration: signal against concentration of a standard, three replicates at each of
    eight levels starting at a blank, a slight saturation, and scatter that rises with the signal (each
    row's stated standard uncertainty u). Also a file of unknowns (three replicate readings per sample) and
    one of control standards measured later (known concentration, two readings each)."""
    levels = np.array([0.0, 1.0, 2.0, 5.0, 10.0, 20.0, 40.0, 80.0])

    def signal(c):
        return 0.050 + 0.0240 * c - 0.000060 * c ** 2

    def u_of(s):
        return 0.0030 + 0.012 * s

    conc = np.repeat(levels, 3)
    s = signal(conc)
    u = u_of(s)
    obs = s + u * rng.normal(size=conc.size)
    cal = ["conc [ng/mL],signal [AU],u_signal [AU]"]
    cal += [f"{c:.1f},{a:.5f},{b:.5f}" for c, a, b in zip(conc, obs, u)]
    truth = {"S-01": 3.0, "S-02": 15.0, "S-03": 35.0, "S-04": 70.0, "S-05": 0.4}
    unk = ["sample,signal [AU],u_signal [AU]"]
    for name, c in truth.items():
        s0 = signal(c)
        for r in s0 + u_of(s0) * rng.normal(size=3):
            unk.append(f"{name},{r:.5f},{u_of(s0):.5f}")
    ctl = ["conc [ng/mL],signal [AU]"]
    for c in (2.5, 7.5, 25.0, 60.0):          # control standards measured on another day
        s0 = signal(c)
        for r in s0 + u_of(s0) * rng.normal(size=2):
            ctl.append(f"{c:.1f},{r:.5f}")
    return "\n".join(cal) + "\n", "\n".join(unk) + "\n", "\n".join(ctl) + "\n"


def main() -> None:
    rng = np.random.default_rng(20261202)
    for name, make in (("thermistor_bench.csv", thermistor), ("furnace_yield.csv", furnace),
                       ("beam_deflection.csv", beam)):
        (HERE / name).write_text(make(rng), encoding="utf-8")
    cal, unknowns, controls = assay(rng)
    (HERE / "assay_calibration.csv").write_text(cal, encoding="utf-8")
    (HERE / "assay_unknowns.csv").write_text(unknowns, encoding="utf-8")
    (HERE / "assay_controls.csv").write_text(controls, encoding="utf-8")


if __name__ == "__main__":
    main()
