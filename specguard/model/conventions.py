"""The motor constants under their declared conventions: one place where every figure,
the consistency rule and the model's own check read them (docs/physics.md §4.2-§4.4).

A brushed motor has one terminal constant. A three-phase motor's constants depend on
its EMF shape, which its commutation tells:

- sinusoidal (sinusoidal or space-vector PWM): the back-EMF constant is read as the
  amplitude of the phase EMF per rad/s (line-to-line values through sqrt 3, RMS values
  through sqrt 2); the torque constant per A of RMS phase current;
- trapezoidal (six-step): the back-EMF constant is the FLAT TOP of the EMF: a
  line-to-line peak constant is the flat top of the line-to-line EMF, which is what the
  two conducting phases put against the bridge; a phase-peak constant is half of it.
  An RMS constant of a trapezoidal EMF depends on the wave's shape and is refused by the
  model (a located error). The torque constant is per A of block (DC-link) current: a
  block or phase-peak constant as given, a phase-RMS one times sqrt(2/3) (a 120-degree
  block current of amplitude I has the RMS value I sqrt(2/3)).
"""

from __future__ import annotations

import math

SQRT2 = math.sqrt(2.0)
SQRT3 = math.sqrt(3.0)

# Sinusoidal EMF: the declared convention -> factor to the phase amplitude per rad/s.
SINE_TO_PHASE_PEAK = {
    "line-to-line-peak": 1.0 / SQRT3,
    "line-to-line-rms": SQRT2 / SQRT3,
    "phase-peak": 1.0,
    "phase-rms": SQRT2,
}
# Trapezoidal EMF: the declared convention -> factor to the flat top of the line-to-line EMF.
TRAPEZOID_TO_LINE_FLAT = {"line-to-line-peak": 1.0, "phase-peak": 2.0}


def is_six_step(spec) -> bool:
    return spec.motor.type == "three-phase" and spec.stage.pwm.scheme.startswith("six-step")


def loop_emf_constant(spec) -> float:
    """EMF constant of the current loop [V s/rad]: the terminal constant (brushed), the
    flat top of the line-to-line EMF (six-step: two phases in series), the phase
    amplitude (sinusoidal)."""
    motor = spec.motor
    ke, conv = motor.back_emf_constant.value, motor.back_emf_constant.voltage
    if motor.type == "brushed-dc":
        return ke
    if is_six_step(spec):
        # RMS conventions are refused by the model for six-step; the sinusoidal reading
        # (2 x the phase amplitude) only keeps a figure finite if one slips through
        return ke * TRAPEZOID_TO_LINE_FLAT.get(conv, 2.0 * SINE_TO_PHASE_PEAK.get(conv, 1.0))
    return ke * SINE_TO_PHASE_PEAK[conv]


def torque_constant_model(spec) -> float:
    """Torque per A of the current the figures call ``current``: the DC current
    (brushed), the block current (six-step), the RMS phase current (sinusoidal)."""
    motor = spec.motor
    kt, conv = motor.torque_constant.value, motor.torque_constant.current
    if motor.type == "brushed-dc":
        return kt
    if is_six_step(spec):
        if conv in ("block", "phase-peak"):
            return kt
        return kt * math.sqrt(2.0 / 3.0)  # per A rms -> per A of block current
    if conv == "phase-peak":
        return kt * SQRT2  # per A peak -> per A rms
    return kt


def line_peak_constant(spec) -> float:
    """The back-EMF constant as the peak of the line-to-line EMF [V s/rad] (the flat top
    for six-step), for the consistency of the two constants."""
    motor = spec.motor
    ke, conv = motor.back_emf_constant.value, motor.back_emf_constant.voltage
    if is_six_step(spec):
        return loop_emf_constant(spec)
    return ke * SINE_TO_PHASE_PEAK[conv] * SQRT3


def convention_problem(spec) -> tuple[tuple[str, ...], str] | None:
    """(document path, message) when a declared convention does not fit the motor's EMF
    shape, else None (the model reports it as a located error)."""
    motor = spec.motor
    if motor.type != "three-phase":
        return None
    ke_conv = motor.back_emf_constant.voltage
    if is_six_step(spec) and ke_conv not in TRAPEZOID_TO_LINE_FLAT:
        return (
            ("motor", "back_emf_constant", "voltage"),
            f"'{ke_conv}' does not fit a six-step (trapezoidal) motor: the RMS value of a trapezoidal EMF depends on "
            "its shape; give the flat top as 'line-to-line-peak' (or 'phase-peak')",
        )
    if not is_six_step(spec) and motor.torque_constant.current == "block":
        return (
            ("motor", "torque_constant", "current"),
            "'block' fits six-step commutation only; for sinusoidal commutation give 'phase-rms' or 'phase-peak'",
        )
    return None
