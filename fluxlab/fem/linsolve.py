"""Sparse direct solvers for the reduced Jacobian (symmetric positive definite).

A backend is a callable ``backend(matrix) -> solve``: it factorises a CSR matrix and
returns a function solving it for one right-hand side.  Backends keep what depends only
on the sparsity pattern (fill-reducing ordering, symbolic analysis) and reuse it while
the pattern stays the same: within a rotor step the pattern is fixed (the assembly keeps
explicit zeros, :mod:`fluxlab.fem.assembly`), a new step changes it (the sliding tie).

Backends, by name (:func:`choose`):

``"scipy"``
    SuperLU (always available) with the symmetric settings: minimum degree on A^T + A,
    no pivoting.  The ordering of a pattern is computed at its first factorisation and
    later factorisations of the same pattern permute the matrix and skip the ordering.
``"pardiso"``
    Intel MKL PARDISO through the ``pypardiso`` wheel (optional extra ``fast``), in its
    real symmetric positive definite mode, one symbolic analysis per pattern, one MKL
    thread by default (two threads on two cores measured slower, see benchmarks/solve.py).
``"auto"``
    ``"pardiso"`` when it imports and loads, else ``"scipy"``.
"""

from __future__ import annotations

import ctypes
import logging
from collections import OrderedDict
from collections.abc import Callable

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import splu

from fluxlab.errors import ConvergenceError, SpecError

__all__ = [
    "LinearSolver",
    "BACKENDS",
    "SuperLUSolver",
    "PardisoSolver",
    "pardiso_available",
    "choose",
]

logger = logging.getLogger(__name__)

#: A factorisation: takes the symmetric positive definite reduced Jacobian (CSR) and
#: returns a function solving it for one right-hand side.
LinearSolver = Callable[[sparse.csr_matrix], Callable[[np.ndarray], np.ndarray]]

#: Names :func:`choose` accepts.
BACKENDS = ("auto", "scipy", "pardiso")

#: PARDISO's fill-in ordering by system size. Measured on two cores (demo rotor steps, one
#: MKL thread): at 15.5k unknowns (P1) minimum degree took 1.77 s for 12 new rotor steps
#: against 2.22 s with METIS (the ordering dominates a new pattern; refactorisations of known
#: patterns equal); at 104k unknowns (P2) METIS refactored 20 % faster (10.96 against
#: 13.2 s for 6 known steps) at the same cost for new ones. The switch lies between.
METIS_FROM_UNKNOWNS = 40_000

#: Patterns whose ordering or analysis a backend keeps: a study revisits a few rotor steps
#: (the current-angle study cycles through its positions), a PARDISO analysis with its
#: factor takes a few MB at 20k nodes.
_PATTERNS = 8


def _singular(exc: Exception) -> ConvergenceError:
    return ConvergenceError(
        f"linear solve: the Jacobian is singular ({exc}); is the potential fixed anywhere "
        "(an 'outer' boundary, anti-periodic edges or a fixed dof)?"
    )


def _pattern_key(matrix: sparse.csr_matrix) -> tuple:
    return (matrix.shape[0], matrix.indices.size, id(matrix.indices), id(matrix.indptr))


class _PatternCache:
    """Per-pattern data, looked up by array identity and checked by value.

    Matrices built from one :class:`fluxlab.fem.tiemap.ReducedPattern` share its index
    arrays, so identity finds them fast; the stored copy is compared before reuse, so a
    different pattern in recycled memory is never taken for the old one.
    """

    def __init__(self, make: Callable[[sparse.csr_matrix], object]):
        self._make = make
        self._entries: OrderedDict = OrderedDict()

    def get(self, matrix: sparse.csr_matrix):
        key = _pattern_key(matrix)
        keys = [key] if key in self._entries else []
        keys += [k for k in reversed(self._entries) if k != key]
        for k in keys:  # the same arrays first, then any stored pattern by value
            indptr, indices, value = self._entries[k]
            if np.array_equal(indptr, matrix.indptr) and np.array_equal(indices, matrix.indices):
                self._entries.move_to_end(k)
                return value
        value = self._make(matrix)
        self._entries[key] = (matrix.indptr.copy(), matrix.indices.copy(), value)
        while len(self._entries) > _PATTERNS:
            _, (_, _, old) = self._entries.popitem(last=False)
            if hasattr(old, "release"):
                old.release()
        return value

    def clear(self) -> None:
        while self._entries:
            _, (_, _, old) = self._entries.popitem()
            if hasattr(old, "release"):
                old.release()


# --- SuperLU -------------------------------------------------------------------------------


class _Ordering:
    """A pattern's fill-reducing order and the map of its CSR data into the permuted CSC."""

    def __init__(self, matrix: sparse.csr_matrix):
        self.order: np.ndarray | None = None
        self.shape = matrix.shape
        self.indptr = self.indices = self.take = None

    def set_order(self, matrix: sparse.csr_matrix, order: np.ndarray) -> None:
        # Permute a matrix holding the positions 1..nnz: its data is the gather map.
        tag = sparse.csr_matrix(
            (np.arange(1, matrix.nnz + 1, dtype=float), matrix.indices, matrix.indptr),
            shape=matrix.shape,
        )
        permuted = tag[order][:, order].tocsc()
        permuted.sort_indices()
        self.take = permuted.data.astype(np.intp) - 1
        self.indptr, self.indices = permuted.indptr, permuted.indices
        self.order = order

    def permuted(self, matrix: sparse.csr_matrix) -> sparse.csc_matrix:
        return sparse.csc_matrix(
            (matrix.data[self.take], self.indices, self.indptr), shape=self.shape
        )


class SuperLUSolver:
    """SuperLU with symmetric ordering and no pivoting (SPD matrices), ordering reused.

    The first factorisation of a pattern orders it by minimum degree on A^T + A
    (``permc_spec="MMD_AT_PLUS_A"``, ``SymmetricMode``, no pivoting); later ones
    permute the matrix by that order through a precomputed gather map and factorise it
    in natural order, which skips the ordering (a third of the factorisation time at
    15k unknowns, measured in benchmarks/solve.py).  Each returned solve function stays
    valid after later factorisations.
    """

    name = "scipy"

    def __init__(self):
        self._orderings = _PatternCache(_Ordering)

    def describe(self) -> str:
        """Backend and settings, for reports."""
        return "scipy SuperLU (MMD on A^T+A, symmetric mode, ordering reused per pattern)"

    def __call__(self, matrix: sparse.csr_matrix) -> Callable[[np.ndarray], np.ndarray]:
        ordering = self._orderings.get(matrix)
        options = dict(SymmetricMode=True)
        try:
            if ordering.order is None:
                # A symmetric CSR matrix read as CSC is itself: no conversion needed.
                csc = sparse.csc_matrix(
                    (matrix.data, matrix.indices, matrix.indptr), shape=matrix.shape
                )
                lu = splu(csc, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                          options=options)
                ordering.set_order(matrix, np.argsort(lu.perm_c))
                return lu.solve
            lu = splu(ordering.permuted(matrix), permc_spec="NATURAL",
                      diag_pivot_thresh=0.0, options=options)
        except RuntimeError as exc:  # SuperLU reports a zero pivot this way
            raise _singular(exc) from exc
        order = ordering.order

        def solve(rhs: np.ndarray) -> np.ndarray:
            x = np.empty_like(rhs, dtype=float)
            x[order] = lu.solve(np.asarray(rhs, dtype=float)[order])
            return x

        return solve


# --- MKL PARDISO ---------------------------------------------------------------------------

_MTYPE_SPD = 2  # real symmetric positive definite (PARDISO matrix type)
_i32p = ctypes.POINTER(ctypes.c_int32)
_LIBRARY: list = []  # the loaded mkl_rt (our own handle), once per process


def _mkl():
    """Our own ctypes handle to mkl_rt, found the way pypardiso finds it."""
    if not _LIBRARY:
        import pypardiso  # optional extra "fast"

        path = pypardiso.PyPardisoSolver().libmkl._name
        lib = ctypes.CDLL(path)  # separate handle: pypardiso's argtypes stay untouched
        lib.pardiso.restype = None
        lib.pardiso.argtypes = [ctypes.c_void_p, _i32p, _i32p, _i32p, _i32p, _i32p,
                                ctypes.c_void_p, _i32p, _i32p, _i32p, _i32p, _i32p, _i32p,
                                ctypes.c_void_p, ctypes.c_void_p, _i32p]
        _LIBRARY.append(lib)
    return _LIBRARY[0]


def pardiso_available() -> bool:
    """True when pypardiso imports and its MKL library loads."""
    try:
        _mkl()
    except (ImportError, OSError) as exc:
        logger.debug("pardiso not available: %s", exc)
        return False
    return True


class _PardisoPattern:
    """One PARDISO handle: upper-triangle structure of a pattern and its analysis."""

    def __init__(self, matrix: sparse.csr_matrix, ordering: int):
        lib = _mkl()
        n = matrix.shape[0]
        rows = np.repeat(np.arange(n), np.diff(matrix.indptr))
        upper = np.flatnonzero(matrix.indices >= rows)  # CSR order: rows, then columns
        self.take = upper
        self.ja = np.ascontiguousarray(matrix.indices[upper], dtype=np.int32)
        counts = np.bincount(rows[upper], minlength=n)
        self.ia = np.concatenate(([0], np.cumsum(counts))).astype(np.int32)
        if np.any(counts == 0):
            raise _singular(RuntimeError("a row has no diagonal entry"))
        self.n = n
        self.pt = np.zeros(64, dtype=np.int64)  # PARDISO's opaque handle
        self.iparm = np.zeros(64, dtype=np.int32)
        self.iparm[0] = 1  # use the values below, not the defaults
        self.iparm[1] = ordering  # 0 minimum degree, 2 METIS nested dissection
        self.iparm[34] = 1  # zero-based indices
        self.values = np.zeros(self.ja.size)
        self.generation = 0
        self._lib = lib
        self._call(11, None, None)  # symbolic analysis, once per pattern

    def _call(self, phase: int, rhs, out) -> None:
        err = ctypes.c_int32(0)
        one = ctypes.c_int32(1)
        self._lib.pardiso(
            self.pt.ctypes.data, ctypes.byref(one), ctypes.byref(one),
            ctypes.byref(ctypes.c_int32(_MTYPE_SPD)), ctypes.byref(ctypes.c_int32(phase)),
            ctypes.byref(ctypes.c_int32(self.n)), self.values.ctypes.data,
            self.ia.ctypes.data_as(_i32p), self.ja.ctypes.data_as(_i32p), None,
            ctypes.byref(one), self.iparm.ctypes.data_as(_i32p),
            ctypes.byref(ctypes.c_int32(0)),
            None if rhs is None else rhs.ctypes.data, None if out is None else out.ctypes.data,
            ctypes.byref(err),
        )
        if err.value != 0:
            # -4: zero pivot; -3 reordering problem; -2 out of memory (MKL manual)
            raise _singular(RuntimeError(f"PARDISO error {err.value} in phase {phase}"))

    def factor(self, matrix: sparse.csr_matrix) -> Callable[[np.ndarray], np.ndarray]:
        self.values[:] = matrix.data[self.take]
        self._call(22, None, None)
        self.generation += 1
        generation = self.generation

        def solve(rhs: np.ndarray) -> np.ndarray:
            if generation != self.generation:
                raise RuntimeError("pardiso: this factorisation was replaced by a newer one")
            b = np.ascontiguousarray(rhs, dtype=float)
            x = np.zeros_like(b)
            self._call(33, b, x)
            return x

        return solve

    def release(self) -> None:
        if self.pt.any():
            self._call(-1, None, None)
            self.pt[:] = 0

    def __del__(self):
        try:
            self.release()
        except Exception:  # interpreter shutdown: nothing left to free safely
            pass


class PardisoSolver:
    """MKL PARDISO (SPD mode), one symbolic analysis per pattern, reused.

    Parameters
    ----------
    threads
        MKL threads (process-wide setting).  Default 1: on two cores the second thread
        fights the BLAS pools and a parallel sweep (DEVELOPERS.md, Speed).
    ordering
        PARDISO fill-in ordering: 0 minimum degree, 2 METIS nested dissection, or None
        (default) for minimum degree below :data:`METIS_FROM_UNKNOWNS` unknowns and METIS
        from there on.

    A returned solve function is valid until the next factorisation of the same
    pattern (it raises otherwise), which is how Newton uses it.

    Raises
    ------
    ImportError
        When pypardiso (optional extra ``fast``) is not installed.
    """

    name = "pardiso"

    def __init__(self, threads: int = 1, ordering: int | None = None):
        lib = _mkl()
        if ordering not in (None, 0, 2, 3):
            raise SpecError(f"ordering: {ordering!r} must be 0 (minimum degree), 2/3 (METIS) "
                            "or None (by size)")
        lib.MKL_Set_Num_Threads(ctypes.c_int(int(threads)))
        self.threads = int(threads)
        self.ordering = ordering
        self._patterns = _PatternCache(lambda m: _PardisoPattern(m, self.ordering_for(m)))

    def ordering_for(self, matrix: sparse.csr_matrix) -> int:
        """The ordering a pattern of ``matrix``'s size gets (see the class)."""
        if self.ordering is not None:
            return self.ordering
        return 2 if matrix.shape[0] >= METIS_FROM_UNKNOWNS else 0

    def describe(self) -> str:
        """Backend and settings, for reports."""
        kind = {None: f"minimum-degree ordering below {METIS_FROM_UNKNOWNS} unknowns, METIS "
                      "above", 0: "minimum-degree ordering"}.get(self.ordering, "METIS ordering")
        return f"MKL PARDISO (SPD, {kind}, analysis per pattern, {self.threads} thread)"

    def __call__(self, matrix: sparse.csr_matrix) -> Callable[[np.ndarray], np.ndarray]:
        return self._patterns.get(matrix).factor(matrix)

    def __del__(self):
        try:
            self._patterns.clear()
        except Exception:  # interpreter shutdown
            pass


def choose(name: str = "auto") -> LinearSolver:
    """A new linear-solver backend by name (see the module docstring).

    Raises
    ------
    SpecError
        On an unknown name, or ``"pardiso"`` when pypardiso is not installed (install
        the optional extra: ``pip install fluxlab[fast]``).
    """
    if name not in BACKENDS:
        raise SpecError(f"linear_solver: {name!r} is not one of {', '.join(BACKENDS)}")
    if name == "auto":
        name = "pardiso" if pardiso_available() else "scipy"
    if name == "scipy":
        return SuperLUSolver()
    if not pardiso_available():
        raise SpecError(
            "linear_solver: 'pardiso' needs the pypardiso package (pip install 'fluxlab[fast]')"
        )
    return PardisoSolver()
