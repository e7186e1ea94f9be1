"""Physics against the ngspice circuit simulator (transients generated here).

Check values come from ngspice (Debian ngspice 39) transient simulations of ideal
bridge legs feeding R-L-EMF loads; the closed forms must agree within 0.5 %
(H-bridge peak-to-peak and average) and 2 % (three-phase SVPWM ripple RMS).
"""

from __future__ import annotations

import pytest

from specguard import physics as p

from .spice_cases import (
    HBRIDGE_CASES,
    NGSPICE,
    hbridge_netlist,
    phase_ripple_from_trace,
    run,
    svpwm_netlist,
)

pytestmark = pytest.mark.skipif(NGSPICE is None, reason="ngspice not installed (apt-get install ngspice)")

WORST = {}


def _record(name, value):
    WORST[name] = max(WORST.get(name, 0.0), value)


@pytest.mark.parametrize("case", HBRIDGE_CASES, ids=[f"ngspice-{c[0]}-Tr/tau={c[6]}" for c in HBRIDGE_CASES])
def test_hbridge_against_ngspice(case, tmp_path):
    scheme, volts, m, resistance, inductance, i_avg, ratio = case
    netlist, pwm_frequency, emf = hbridge_netlist(*case)
    sim = run(netlist, tmp_path)  # check values: ngspice transient of this netlist
    exact = p.ripple_exact(volts, inductance, resistance, pwm_frequency, m, scheme, emf)
    pp_sim = sim["imax"] - sim["imin"]
    err_pp = abs(exact.peak_to_peak / pp_sim - 1.0)
    err_avg = abs(exact.average - sim["iavg"]) / max(abs(sim["iavg"]), pp_sim)
    err_rms = abs(exact.rms / sim["irms"] - 1.0)
    err_peak = abs(exact.maximum - sim["imax"]) / pp_sim
    _record("hbridge peak-to-peak", err_pp)
    _record("hbridge average", err_avg)
    _record("hbridge rms", err_rms)
    _record("hbridge peak (rel. to pp)", err_peak)
    print(
        f"\n{scheme} T_r/tau={ratio}: pp exact {exact.peak_to_peak:.6g} ngspice {pp_sim:.6g} "
        f"(err {err_pp:.2e}), avg err {err_avg:.2e}, rms err {err_rms:.2e}"
    )
    assert err_pp < 5e-3
    assert err_avg < 5e-3
    assert err_rms < 5e-3
    assert err_peak < 5e-3


@pytest.mark.parametrize("m", [0.6, 1.0])
def test_svpwm_three_phase_against_ngspice(m, tmp_path):
    volts, inductance, f_pwm, ratio = 48.0, 100e-6, 20e3, 48
    netlist, period = svpwm_netlist(volts, inductance, f_pwm, m, ratio, tmp_path)
    run(netlist, tmp_path)  # check values: ngspice transient of the 3-leg bridge
    rms_sim, pp_sim = phase_ripple_from_trace(tmp_path / "phase_a.dat", period, ratio)
    rms_closed = p.phase_ripple_rms(volts, inductance, f_pwm, m, "svpwm")
    err = abs(rms_closed / rms_sim - 1.0)
    _record("svpwm rms", err)
    print(
        f"\nSVPWM M={m}: rms closed {rms_closed:.6g} ngspice {rms_sim:.6g} (err {err:.2e}); "
        f"pp max ngspice {pp_sim:.6g} (48 angles) closed "
        f"{p.phase_ripple_peak_to_peak_max(volts, inductance, f_pwm, m, 'svpwm'):.6g}"
    )
    assert err < 2e-2


def test_zz_ngspice_summary():
    """Module-level summary: prints the worst relative errors (run with -s)."""
    assert WORST, "no ngspice case ran before the summary"
    print("\nngspice worst relative errors: " + ", ".join(f"{k} {v:.2e}" for k, v in WORST.items()))
    assert max(WORST.values()) < 2e-2
