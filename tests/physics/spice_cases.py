"""ngspice netlists and cases shared by the tests and the benchmark (test helper).

Every bridge leg is an ideal voltage source (PULSE or PWL, 0 ... V) with edges of
1e-5 of the PWM period, so the circuit simulator, not our scheme table, decides what
the load sees.  Settings follow the ngspice manual (a .control block, meas inside it).
"""

from __future__ import annotations

import math
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np

NGSPICE = shutil.which("ngspice")
RESULT = re.compile(r"RESULT (.*)")

# (scheme, supply V, modulation m, R [Ohm], L [H], average current [A], T_r / tau_e)
HBRIDGE_CASES = [
    (scheme, 24.0, m, 1.0, 100e-6, i_avg, ratio)
    for scheme, m, i_avg in (
        ("bipolar", 0.3, 2.0),
        ("unipolar_single", 0.4, 1.5),
        ("unipolar_phase_shifted", 0.7, 3.0),
    )
    for ratio in (0.1, 0.5, 1.0, 2.0, 5.0)
]


def ripple_period(scheme, pwm_frequency):
    return 0.5 / pwm_frequency if scheme == "unipolar_phase_shifted" else 1.0 / pwm_frequency


def leg_sources(scheme, volts, m, period):
    """Two leg sources (A, B) of one H-bridge, centre-aligned where both switch."""
    edge = period * 1e-5

    def centred(duty):
        width = duty * period - edge  # average over the period is exactly duty * V
        delay = 0.5 * (period - duty * period)
        return f"PULSE(0 {volts} {delay:.12g} {edge:.6g} {edge:.6g} {width:.12g} {period:.12g})"

    if scheme == "bipolar":
        d_a = 0.5 * (1.0 + m)
        width = (1.0 - d_a) * period - edge
        delay = 0.5 * (period + d_a * period)
        b = f"PULSE(0 {volts} {delay:.12g} {edge:.6g} {edge:.6g} {width:.12g} {period:.12g})"
        return centred(d_a), b
    if scheme == "unipolar_single":
        return centred(m), "DC 0"
    return centred(0.5 * (1.0 + m)), centred(0.5 * (1.0 - m))


def run(netlist: str, workdir: Path) -> dict:
    path = workdir / "case.cir"
    path.write_text(netlist)
    done = subprocess.run([NGSPICE, "-b", str(path)], capture_output=True, text=True, timeout=120, cwd=workdir)
    match = RESULT.search(done.stdout)
    if done.returncode != 0 or not match:
        raise RuntimeError(f"ngspice failed rc={done.returncode}:\n{done.stdout[-2000:]}\n{done.stderr[-2000:]}")
    return {k: float(v) for k, v in (item.split("=") for item in match.group(1).split())}


def hbridge_netlist(scheme, volts, m, resistance, inductance, i_avg, ratio):
    tau = inductance / resistance
    t_r = ratio * tau
    pwm_frequency = 0.5 / t_r if scheme == "unipolar_phase_shifted" else 1.0 / t_r
    period = 1.0 / pwm_frequency
    emf = m * volts - resistance * i_avg
    a, b = leg_sources(scheme, volts, m, period)
    settle = math.ceil(12.0 * tau / period) * period  # start at I_avg: 12 tau settles
    stop = settle + 2.0 * period
    step = period / 2000.0
    netlist = f"""* H-bridge {scheme}, R-L-EMF load, T_r/tau = {ratio}
VA a 0 {a}
VB b 0 {b}
R1 a n1 {resistance}
L1 n1 n2 {inductance} ic={i_avg}
VEMF n2 b DC {emf}
.options reltol=1e-7 abstol=1e-12 method=gear maxord=2
.control
tran {step:.6g} {stop:.12g} 0 {step:.6g} uic
meas tran imax MAX i(VEMF) from={stop - period:.12g} to={stop:.12g}
meas tran imin MIN i(VEMF) from={stop - period:.12g} to={stop:.12g}
meas tran iavg AVG i(VEMF) from={stop - period:.12g} to={stop:.12g}
meas tran irms RMS i(VEMF) from={stop - period:.12g} to={stop:.12g}
echo "RESULT imax=$&imax imin=$&imin iavg=$&iavg irms=$&irms"
quit
.endc
.end
"""
    return netlist, pwm_frequency, emf


def svpwm_netlist(volts, inductance, pwm_frequency, m, carrier_ratio, workdir: Path):
    """3-leg bridge (PWL legs, regular-sampled centre-aligned SVPWM), star R-L-EMF load,
    isolated neutral.  The phase EMFs are staircases equal to the per-period average
    phase voltage, so the current is pure ripple plus a decaying offset."""
    period = 1.0 / pwm_frequency
    edge = period * 1e-5
    resistance = 1e-3 * inductance * pwm_frequency
    k = np.arange(carrier_ratio)
    theta = 2.0 * np.pi * (k + 0.5) / carrier_ratio
    refs = 0.5 * m * np.cos(theta[:, None] - np.array([0.0, 2.0, 4.0]) * np.pi / 3.0)
    refs -= 0.5 * (refs.max(axis=1, keepdims=True) + refs.min(axis=1, keepdims=True))
    duty = 0.5 + refs
    lines = []
    for leg in range(3):
        pts = ["0 0"]
        emf = ["0 0"]
        for j in range(carrier_ratio):
            t0 = j * period
            d = duty[j, leg]
            on = t0 + 0.5 * period - 0.5 * d * period
            off = t0 + 0.5 * period + 0.5 * d * period
            pts += [
                f"{on - edge / 2:.12g} 0",
                f"{on + edge / 2:.12g} {volts}",
                f"{off - edge / 2:.12g} {volts}",
                f"{off + edge / 2:.12g} 0",
            ]
            e = volts * (d - duty[j].mean())
            emf += [f"{t0 + edge:.12g} {e:.12g}", f"{t0 + period:.12g} {e:.12g}"]
        lines.append(f"V{leg} p{leg} 0 PWL(" + _continued(pts) + ")")
        lines.append(f"VE{leg} e{leg} n PWL(" + _continued(emf) + ")")
        lines.append(f"VS{leg} p{leg} s{leg} DC 0")
        lines.append(f"R{leg} s{leg} r{leg} {resistance}")
        lines.append(f"L{leg} r{leg} e{leg} {inductance} ic=0")
    stop = carrier_ratio * period
    step = period / 1000.0
    netlist = (
        "* 3-leg SVPWM bridge, star load, isolated neutral\n"
        + "\n".join(lines)
        + f"""
.options reltol=1e-7 abstol=1e-12 method=gear maxord=2
.control
tran {step:.6g} {stop:.12g} 0 {step:.6g} uic
set wr_singlescale
set wr_vecnames
wrdata phase_a.dat i(VS0)
echo "RESULT done=1"
quit
.endc
.end
"""
    )
    return netlist, period


def _continued(points, per_line=8):
    chunks = [" ".join(points[i : i + per_line]) for i in range(0, len(points), per_line)]
    return "\n+ ".join(chunks)


def phase_ripple_from_trace(path: Path, period, carrier_ratio, samples=4000):
    """Per-period mean removed from the simulated phase current: (rms, max pp)."""
    data = np.loadtxt(path, skiprows=1)
    t, i = data[:, 0], data[:, 1]
    mean_squares = []
    pps = []
    for j in range(carrier_ratio):
        grid = j * period + (np.arange(samples) + 0.5) * period / samples
        y = np.interp(grid, t, i)
        y = y - y.mean()
        mean_squares.append(np.mean(y * y))
        pps.append(y.max() - y.min())
    return math.sqrt(np.mean(mean_squares)), max(pps)
