"""A test double for the sweep tests: a fake, deterministic evaluator shaped like the real one.

Not part of fluxlab. The sweep tests pass it through the Python API, as a function or by
name: ``run_sweep(..., evaluator=fake_evaluate)`` or
``run_sweep(..., evaluator="fake_evaluator:fake_evaluate")`` (pytest puts ``tests/`` on
``sys.path``; a subprocess needs it on ``PYTHONPATH``). Its numbers are made up from simple
closed-form expressions of the rotor dimensions: they exercise the sweep machinery
(storage, resuming, executors, plots) and never model a machine. Its summary has the key
names of the real one (``saliency_apparent``, ``Ld_apparent_H``, ``torque_mean_Nm``, ...).

Environment variables, read at each call:

``FLUXLAB_FAKE_EVAL_DELAY_S``
    Sleep this long per candidate, s (makes a sweep slow enough to interrupt).
``FLUXLAB_FAKE_EVAL_WORK``
    Factorise a sparse 2-D Laplacian (about 40k unknowns) this many times per candidate:
    CPU work for measuring parallel speed-up.

A candidate with ``operating.speed_rpm >= 99999`` raises :class:`ConvergenceError`, to test
failures; one with ``operating.speed_rpm == 77777`` ends its process at once with
``os._exit``, like a crash of the mesher or an out-of-memory kill (the speed changes nothing
else here).
"""

from __future__ import annotations

import math
import os
import time
from dataclasses import dataclass

import numpy as np

from fluxlab.errors import ConvergenceError
from fluxlab.machine.dq import dq_torque

__all__ = ["FAIL_SPEED_RPM", "CRASH_SPEED_RPM", "FakeCurve", "FakeEvaluation", "fake_evaluate",
           "fake_summary"]

FAIL_SPEED_RPM = 99999.0
CRASH_SPEED_RPM = 77777.0


@dataclass(frozen=True)
class FakeCurve:
    """Torque samples: ``position_deg`` or ``current_angle_deg`` and ``torque_Nm``."""

    torque_Nm: np.ndarray
    position_deg: np.ndarray | None = None
    current_angle_deg: np.ndarray | None = None


@dataclass(frozen=True)
class FakeEvaluation:
    """What :func:`fake_evaluate` returns: the attributes a sweep reads."""

    summary: dict
    torque_vs_position: FakeCurve | None
    torque_vs_current_angle: FakeCurve | None


def _burn(rounds: int) -> None:
    from scipy import sparse
    from scipy.sparse.linalg import splu

    if rounds <= 0:
        return
    n = 200
    lap = sparse.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(n, n))
    k = (sparse.kron(lap, sparse.eye(n)) + sparse.kron(sparse.eye(n), lap)).tocsc()
    for _ in range(rounds):
        splu(k)


def fake_summary(spec, studies: str) -> dict:
    """The made-up summary of a machine (see the module docstring)."""
    from fluxlab.version import __version__

    widths_mm = sum(b.width for b in spec.rotor.barriers) * 1e3
    ends_deg = sum(math.degrees(b.end_angle) for b in spec.rotor.barriers)
    saliency = 1.0 + 0.35 * widths_mm
    ld = 0.04 * (1.0 + 0.005 * (ends_deg - 72.0))  # wider barrier ends: more d-axis flux
    lq = ld / saliency
    current = spec.operating.current_peak_A
    gamma = spec.operating.current_angle or math.radians(45.0)
    i_d, i_q = current * math.cos(gamma), current * math.sin(gamma)
    torque = dq_torque(spec.pole_pairs, ld * i_d, lq * i_q, i_d, i_q)
    phi = math.atan2(lq * i_q, ld * i_d) + math.pi / 2 - gamma  # voltage leads flux by 90 deg
    slot_pitch_deg = 360.0 / spec.stator.slots
    summary = {
        "Ld_apparent_H": ld, "Lq_apparent_H": lq, "saliency_apparent": saliency,
        "torque_mean_Nm": torque,
        "torque_ripple_pct": None, "mtpa_angle_deg": None, "power_factor": math.cos(phi),
        "current_peak_A": current, "current_angle_deg": math.degrees(gamma),
        "nodes": int(20000 * (3e-3 / spec.mesh.size) ** 2), "fluxlab_version": __version__,
    }
    if studies == "full":
        summary["torque_ripple_pct"] = 4.0 + 20.0 * abs(math.sin(math.pi * ends_deg
                                                                 / slot_pitch_deg))
        summary["mtpa_angle_deg"] = 45.0 + 0.5 * saliency
    return summary


def fake_evaluate(spec, studies: str = "point") -> FakeEvaluation:
    """Fake evaluation of ``spec`` (``studies`` "point" or "full"); deterministic."""
    delay = float(os.environ.get("FLUXLAB_FAKE_EVAL_DELAY_S", "0") or 0)
    if delay > 0:
        time.sleep(delay)
    _burn(int(os.environ.get("FLUXLAB_FAKE_EVAL_WORK", "0") or 0))
    if spec.operating.speed_rpm == CRASH_SPEED_RPM:
        os._exit(70)  # no clean-up, no exception: the worker process is simply gone
    if spec.operating.speed_rpm >= FAIL_SPEED_RPM:
        raise ConvergenceError(f"fake solver: operating.speed_rpm = "
                               f"{spec.operating.speed_rpm} >= {FAIL_SPEED_RPM}")
    summary = fake_summary(spec, studies)
    if studies != "full":
        return FakeEvaluation(summary, None, None)
    mean, ripple = summary["torque_mean_Nm"], summary["torque_ripple_pct"]
    position = np.linspace(0.0, 360.0 / spec.stator.slots, 25)
    wave = np.sin(2 * np.pi * position * spec.stator.slots / 360.0)
    by_position = FakeCurve(mean * (1 + ripple / 200 * wave), position_deg=position)
    angle = np.linspace(0.0, 90.0, 19)
    peak = mean / max(math.sin(2 * math.radians(summary["current_angle_deg"])), 0.1)
    by_angle = FakeCurve(peak * np.sin(2 * np.radians(angle)), current_angle_deg=angle)
    return FakeEvaluation(summary, by_position, by_angle)
