"""What a worker process does with one candidate: validate, evaluate, return plain data.

:func:`evaluate_task` never raises for a candidate's own problems: an invalid machine comes
back ``rejected`` with the validation message, a solver failure (or any other exception)
``failed`` with its message, so one bad candidate never stops a sweep. This module imports
no numerical library at the top, so :func:`init_worker` can still limit BLAS threads
through the environment before numpy is loaded.
"""

from __future__ import annotations

import logging
import math
import os
import signal
import time
from collections.abc import Callable
from importlib import import_module
from pathlib import Path
from typing import Any

from fluxlab.errors import SpecError
from fluxlab.spec.machine_file import machine_from_dict
from fluxlab.studies.blas_threads import BLAS_THREAD_VARIABLES, limit_loaded_blas

__all__ = ["init_worker", "resolve_evaluator", "jsonable", "evaluate_task", "curves_of"]

log = logging.getLogger(__name__)


def init_worker() -> None:
    """Initializer of a local worker process: one BLAS thread, Ctrl-C left to the parent."""
    for name in BLAS_THREAD_VARIABLES:
        os.environ[name] = "1"
    # The terminal sends Ctrl-C to the whole process group; the parent decides what stops.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    limit_loaded_blas()


def resolve_evaluator(ref: str | Callable) -> Callable:
    """The evaluation function named ``"module:function"`` (a callable is returned as is)."""
    if callable(ref):
        return ref
    module, _, name = ref.partition(":")
    return getattr(import_module(module), name)


def jsonable(value: Any) -> Any:
    """``value`` as plain JSON data: numpy scalars and arrays converted, NaN and inf as None."""
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    if hasattr(value, "tolist"):  # numpy array or scalar
        return jsonable(value.tolist())
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if value is None or isinstance(value, (bool, int, float, str)):
        return value
    return str(value)


def _curve(obj: Any, x_name: str) -> dict | None:
    if obj is None:
        return None
    return {x_name: jsonable(getattr(obj, x_name)), "torque_Nm": jsonable(obj.torque_Nm)}


def curves_of(result: Any) -> dict | None:
    """The torque curves of an evaluation as JSON columns, None when it has none."""
    by_angle = getattr(result, "torque_vs_current_angle", None)
    if by_angle is None and getattr(result, "torque_vs_angle", None):
        by_angle = result.torque_vs_angle[0]  # a list by current, the rated current first
    curves = {
        "torque_vs_position": _curve(getattr(result, "torque_vs_position", None),
                                     "position_deg"),
        "torque_vs_current_angle": _curve(by_angle, "current_angle_deg"),
    }
    curves = {k: v for k, v in curves.items() if v is not None}
    return curves or None


def evaluate_task(task: dict) -> dict:
    """Validate and evaluate one candidate.

    Parameters
    ----------
    task
        ``key``, ``machine`` (the machine table, file units), ``base_dir`` (str, for the
        machine's relative file references), ``studies`` and ``evaluator``
        (``"module:function"``).

    Returns
    -------
    dict
        ``key``, ``status`` (done / rejected / failed), ``summary``, ``curves``, ``message``
        and ``elapsed_s`` (wall time of this call, s).
    """

    start = time.perf_counter()
    out = {"key": task["key"], "status": "done", "summary": None, "curves": None,
           "message": ""}
    try:
        limit_loaded_blas()
        spec = machine_from_dict(task["machine"], Path(task["base_dir"]))
        result = resolve_evaluator(task["evaluator"])(spec, studies=task["studies"])
        out["summary"] = jsonable(dict(result.summary))
        out["curves"] = curves_of(result)
    except SpecError as err:  # GeometryError and WindingError too: the machine is invalid
        out.update(status="rejected", message=str(err))
    except Exception as err:  # noqa: BLE001 - a failed candidate must not stop the sweep
        # not the machine file's fault (a solver failure, a mesher error, a bug): retryable
        out.update(status="failed", message=f"{type(err).__name__}: {err}")
        log.debug("candidate %s failed", task["key"], exc_info=True)
    out["elapsed_s"] = time.perf_counter() - start
    return out
