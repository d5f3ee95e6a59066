r"""Optional sparse direct backend: Intel MKL PARDISO through ctypes (extra ``fast``).

The ``mkl`` wheel ships ``libmkl_rt``; this module finds it (the environment's ``lib``
folder, ``MKL_RT`` or the system's library path) and calls ``pardiso`` (LP64, 32-bit indices) directly:

* the upper triangle of the symmetric matrix in CSR, zero-based indices (``iparm[34] = 1``);
* ``mtype = 2`` (symmetric positive definite, Cholesky) for :math:`K` and for the shifted
  :math:`K + \sigma K_g` of shift-and-invert: the factorization fails with error -4 (zero or
  negative pivot) when the matrix is not positive definite;
* ``mtype = -2`` (symmetric indefinite, :math:`LDL^T` with Bunch-Kaufman pivoting inside
  supernodes) for the inertia: ``iparm[21]`` / ``iparm[22]`` are the numbers of positive and
  negative eigenvalues by Sylvester's law of inertia (Golub & Van Loan 2013, Matrix
  Computations, 4th ed., sec. 8.1).  The count is trusted only when no pivot was perturbed
  (``iparm[13] == 0``) and the two add up to ``n``; otherwise :func:`inertia` returns None and
  the caller counts with scipy;
* no iterative refinement (``iparm[7] = 0``), AMD ordering (``iparm[1] = 0``; METIS, 2, from
  :data:`METIS_FROM` rows),
  all right-hand sides of a block in one call.

Which backend is used: :func:`backend` (``"scipy"``, ``"mkl"`` or ``"auto"``, the default:
MKL when its library loads).  ``[analysis] solver`` in the study file sets it for one run
(:func:`use`); the environment variable ``FRAMEBUCKLE_SOLVER`` carries the choice into the
Sturm-count worker process.  Everything here is about speed: results must be the same with
either backend (tests/test_backend_mkl.py).
"""

from __future__ import annotations

import contextlib
import ctypes
import glob
import os
import sys
import threading

import numpy as np
import scipy.sparse as sp

ENV = "FRAMEBUCKLE_SOLVER"
CHOICES = ("auto", "scipy", "mkl")
#: fill-in reducing ordering (iparm[1]) from this many rows on: METIS (2); below, AMD (0).  On the
#: benchmark frames AMD gave less fill and a faster factorization at every size measured (9e4
#: free DOFs: 1.22 M against 1.43 M factor entries, 0.24 s against 0.48 s; 9.6e5: 41.3 M against
#: 43.4 M, 19 s against 34 s on a busy machine), so METIS is not used by default
METIS_FROM = 2**31

_lib = None
_lib_error = None
_lock = threading.Lock()


class PardisoError(RuntimeError):
    """PARDISO returned a non-zero error code (``code``; -4: zero pivot, not positive definite)."""

    def __init__(self, code: int, phase: int):
        super().__init__(f"PARDISO error {code} in phase {phase}")
        self.code = code
        self.phase = phase


def _candidates():
    env = os.environ.get("MKL_RT")
    if env:
        yield env
    for prefix in dict.fromkeys([sys.prefix, sys.exec_prefix, getattr(sys, "base_prefix", sys.prefix)]):
        for pat in ("lib/libmkl_rt.so*", "Library/bin/mkl_rt*.dll", "lib/libmkl_rt*.dylib"):
            yield from sorted(glob.glob(os.path.join(prefix, pat)))
    try:                                       # a user-site install of the wheel
        import site
        user = site.getuserbase()
        yield from sorted(glob.glob(os.path.join(user, "lib", "libmkl_rt.so*")))
    except Exception:                          # noqa: BLE001 - only a search path
        pass
    yield "libmkl_rt.so.3"
    yield "libmkl_rt.so.2"
    yield "libmkl_rt.so"


def load():
    """The ``libmkl_rt`` library (ctypes), or None when it cannot be loaded."""
    global _lib, _lib_error
    if _lib is not None or _lib_error is not None:
        return _lib
    with _lock:
        if _lib is not None or _lib_error is not None:
            return _lib
        errors = []
        # Intel OpenMP threads spin 200 ms after each parallel region by default, taking the
        # core from the dense work between the solves (on a busy 2-core machine the
        # eigensolution at 1e5 DOFs took 8.9 s instead of 5.6 s); set before the runtime loads
        os.environ.setdefault("KMP_BLOCKTIME", "0")
        for path in _candidates():
            try:
                lib = ctypes.CDLL(path)
                lib.pardiso
                lib.pardiso_getdiag
            except (OSError, AttributeError) as exc:
                errors.append(f"{path}: {exc}")
                continue
            lib.pardiso.restype = None
            lib.MKL_Set_Num_Threads.argtypes = [ctypes.c_int]
            lib.MKL_Get_Max_Threads.restype = ctypes.c_int
            _lib = lib
            return _lib
        _lib_error = "; ".join(errors[-3:]) or "libmkl_rt not found"
        return None


def available() -> bool:
    return load() is not None


def backend() -> str:
    """The backend in use now: ``"mkl"`` or ``"scipy"`` (``FRAMEBUCKLE_SOLVER``, default auto)."""
    choice = os.environ.get(ENV, "auto").strip().lower() or "auto"
    if choice == "scipy":
        return "scipy"
    if choice in ("mkl", "auto"):
        return "mkl" if available() else "scipy"
    return "scipy"


#: under ``"auto"``, MKL is used for matrices of at least this many rows; smaller ones are
#: factored with scipy (measured on the benchmark building, cases of 10 modes: at 8 790 DOFs
#: 0.48 s with MKL against 0.24-0.31 s with SuperLU, PARDISO's fixed cost per factorization
#: and call outweighing its faster solves; at 3.1e4 about equal; at 9e4 MKL faster)
AUTO_MIN = 50_000


def active() -> bool:
    return backend() == "mkl"


def used_for(n: int) -> bool:
    """True when a matrix of ``n`` rows is to be factored with MKL: ``"mkl"`` chosen
    explicitly, or ``"auto"`` with the library loaded and ``n >= AUTO_MIN``."""
    if not active():
        return False
    choice = os.environ.get(ENV, "auto").strip().lower() or "auto"
    return choice == "mkl" or n >= AUTO_MIN


def check_choice(choice: str, source=None) -> str:
    """Validate ``[analysis] solver``; an explicit ``"mkl"`` without the library is an error."""
    from ..errors import InputError
    c = str(choice).strip().lower()
    if c not in CHOICES:
        raise InputError(f"[analysis] solver must be one of {', '.join(CHOICES)}, got {choice!r}",
                         source=source)
    if c == "mkl" and not available():
        raise InputError("[analysis] solver = \"mkl\" but the MKL library could not be loaded "
                         f"({_lib_error}); install the extra: pip install \"framebuckle[fast]\", "
                         "or use solver = \"auto\"", source=source)
    return c


@contextlib.contextmanager
def use(choice: str | None):
    """Run a block with the backend ``choice`` (None: leave the current setting)."""
    if choice is None:
        yield
        return
    old = os.environ.get(ENV)
    os.environ[ENV] = choice
    try:
        yield
    finally:
        if old is None:
            os.environ.pop(ENV, None)
        else:
            os.environ[ENV] = old


def blas_limits(block: bool = False) -> dict:
    """Arguments of ``threadpoolctl.threadpool_limits`` for the eigensolver's dense work.

    The tall and skinny products run on one BLAS thread.  Around ARPACK (one-vector
    solves) with MKL active only OpenBLAS is limited, so that PARDISO's solves keep MKL's
    threads (MKL's OpenMP threads and OpenBLAS's threads fighting over the cores made the
    eigensolution 2.6 x slower).  Around the block method (``block=True``) MKL runs on one
    thread too: at 3e4 DOFs a case took 2.3-2.5 s with MKL's threads beside the dense block
    work and 1.0 s without them (at 1e5 and 3e5 the one-vector solves gain nothing from a
    second thread either, within 5 %).
    """
    if active() and not block:
        return {"limits": {"openblas": 1}}
    return {"limits": 1}


def set_threads(n: int):
    lib = load()
    if lib is not None:
        lib.MKL_Set_Num_Threads(int(n))


def one_thread():
    """Initializer of a worker process beside the main one (the Sturm counts): MKL on one
    thread there, so that the two processes do not oversubscribe the cores."""
    if active():
        set_threads(1)


_INT = ctypes.c_int32                   # LP64 interface (pardiso; getdiag needs it)
_NP_INT = np.int32
_P = ctypes.POINTER(_INT)
_D = ctypes.POINTER(ctypes.c_double)


def _upper_csr(A) -> sp.csr_matrix:
    """Upper triangle in CSR, sorted, every diagonal entry stored (PARDISO needs them)."""
    C = sp.coo_matrix(A)
    up = C.row <= C.col
    n = C.shape[0]
    d = np.arange(n)
    U = sp.coo_matrix((np.concatenate([C.data[up].astype(float), np.zeros(n)]),
                       (np.concatenate([C.row[up], d]), np.concatenate([C.col[up], d]))),
                      shape=C.shape).tocsr()       # duplicates summed, explicit zeros kept
    U.sort_indices()
    return U


class PardisoFactor:
    """A PARDISO factorization of a real symmetric sparse matrix (upper triangle used).

    ``mtype``: 2 (positive definite; :class:`PardisoError` -4 when it is not) or -2
    (indefinite; :meth:`inertia`).  ``solve`` takes a vector or an ``(n, m)`` block.
    Memory is released by :meth:`close` (also on garbage collection).
    """

    def __init__(self, A, mtype: int = 2, ordering: int | None = None, pivots: bool = False,
                 upper: bool = False):
        lib = load()
        if lib is None:
            raise RuntimeError(f"MKL PARDISO is not available: {_lib_error}")
        self._lib = lib
        U = A if upper else _upper_csr(A)           # upper: A is already _upper_csr's output
        self.n = U.shape[0]
        if U.nnz >= 2**31 - 1:
            raise PardisoError(-2, 0)          # beyond 32-bit indices: the caller falls back
        self.mtype = int(mtype)
        self._a = np.ascontiguousarray(U.data, dtype=np.float64)
        self._ia = np.ascontiguousarray(U.indptr, dtype=_NP_INT)
        self._ja = np.ascontiguousarray(U.indices, dtype=_NP_INT)
        self._pt = np.zeros(64, dtype=np.int64)   # 64 pointers
        self._iparm = np.zeros(64, dtype=_NP_INT)
        ip = self._iparm
        ip[0] = 1                              # parameters given here
        ip[1] = (2 if self.n >= METIS_FROM else 0) if ordering is None else int(ordering)
        ip[7] = 0                              # no iterative refinement
        ip[9] = 13                             # pivot perturbation 1e-13 (counted in iparm[13])
        ip[10] = 0                             # no scaling / matching: keeps the inertia exact
        ip[12] = 0
        ip[17] = -1                            # report nnz of the factor
        ip[20] = 1                             # Bunch-Kaufman 1x1 and 2x2 pivots (mtype -2)
        ip[34] = 1                             # zero-based indices
        ip[55] = 1 if pivots else 0            # keep the pivots for pardiso_getdiag
        self._open = False
        self._call(12, np.zeros(1), np.zeros(1), 1)     # analysis + numerical factorization
        self._open = True

    def _call(self, phase, b, x, nrhs):
        err = _INT(0)
        one = _INT(1)
        self._lib.pardiso(
            self._pt.ctypes.data_as(ctypes.c_void_p), ctypes.byref(one), ctypes.byref(one),
            ctypes.byref(_INT(self.mtype)), ctypes.byref(_INT(phase)),
            ctypes.byref(_INT(self.n)), self._a.ctypes.data_as(_D),
            self._ia.ctypes.data_as(_P), self._ja.ctypes.data_as(_P), None,
            ctypes.byref(_INT(nrhs)), self._iparm.ctypes.data_as(_P),
            ctypes.byref(_INT(0)), b.ctypes.data_as(_D), x.ctypes.data_as(_D),
            ctypes.byref(err))
        if err.value != 0:
            if phase != -1:
                self._release()
            raise PardisoError(int(err.value), phase)

    def solve(self, b: np.ndarray) -> np.ndarray:
        b = np.asarray(b, dtype=float)
        if b.shape[0] != self.n:
            raise ValueError(f"right-hand side of {b.shape[0]} rows for a matrix of {self.n}")
        one = b.ndim == 1
        B = b.reshape(self.n, -1)
        nrhs = B.shape[1]
        # PARDISO stores the right-hand sides one after the other: column-major (n, nrhs)
        Bf = np.asfortranarray(B)
        if Bf is B:
            Bf = Bf.copy(order="F")
        X = np.empty((self.n, nrhs), order="F")
        self._call(33, Bf, X, nrhs)
        return X[:, 0] if one else X

    def inertia(self) -> tuple[int, int, int]:
        """(positive, negative, perturbed) pivots of the last factorization (mtype -2)."""
        ip = self._iparm
        return int(ip[21]), int(ip[22]), int(ip[13])

    def pivots(self) -> tuple[np.ndarray, np.ndarray]:
        """``(df, da)``: the pivots and the matrix's diagonal entries they belong to, both in
        the factorization's (permuted) order (``pardiso_getdiag``; needs ``pivots=True``)."""
        df = np.zeros(self.n)
        da = np.zeros(self.n)
        err = _INT(0)
        self._lib.pardiso_getdiag(self._pt.ctypes.data_as(ctypes.c_void_p), df.ctypes.data_as(_D),
                                  da.ctypes.data_as(_D), ctypes.byref(_INT(1)),
                                  ctypes.byref(err))
        if err.value != 0:
            raise PardisoError(int(err.value), 0)
        return df, da

    @property
    def factor_nnz(self) -> int:
        return int(self._iparm[17])

    def _release(self):
        if self._pt.any():
            err = _INT(0)
            one = _INT(1)
            dummy = np.zeros(1)
            self._lib.pardiso(
                self._pt.ctypes.data_as(ctypes.c_void_p), ctypes.byref(one), ctypes.byref(one),
                ctypes.byref(_INT(self.mtype)), ctypes.byref(_INT(-1)),
                ctypes.byref(_INT(self.n)), dummy.ctypes.data_as(_D),
                self._ia.ctypes.data_as(_P), self._ja.ctypes.data_as(_P), None,
                ctypes.byref(_INT(1)), self._iparm.ctypes.data_as(_P),
                ctypes.byref(_INT(0)), dummy.ctypes.data_as(_D),
                dummy.ctypes.data_as(_D), ctypes.byref(err))
            self._pt[:] = 0

    def close(self):
        self._release()
        self._open = False

    def __del__(self):
        try:
            self._release()
        except Exception:                      # noqa: BLE001 - interpreter shutdown
            pass


def positive_definite_factor(A, min_ratio: float = 0.0, ordering: int | None = None):
    """A ``mtype = 2`` (Cholesky) factorization of ``A``, or None when it does not prove ``A``
    positive definite with every pivot above ``min_ratio`` times its diagonal entry.

    Refused: error -4 (a zero or negative pivot), a perturbed pivot (``iparm[13]``), a pivot
    ``d_i <= min_ratio * |a_ii|``.  The factor's ``min_ratio`` attribute is the smallest
    ``d_i / |a_ii|`` found.
    """
    try:
        f = PardisoFactor(A, 2, ordering, pivots=True)
    except PardisoError:                      # -4: not positive definite; others (memory,
        return None                           # size): the caller factors with scipy
    df, da = f.pivots()
    ratio = df / np.maximum(np.abs(da), 1e-300)
    f.min_ratio = float(ratio.min()) if ratio.size else 1.0
    if int(f._iparm[13]) or not np.isfinite(df).all() or (df <= 0).any() or f.min_ratio <= min_ratio:
        f.close()
        return None
    return f


class _Counter(PardisoFactor):
    """An ``mtype = -2`` handle whose analysis (ordering and symbolic factorization, about half
    the time of a factorization here) serves every later matrix of the same sparsity pattern:
    the Sturm counts of a model's load cases and of its sway search differ only in values."""

    def __init__(self, U: sp.csr_matrix, ordering):
        super().__init__(U, -2, ordering, upper=True)   # analysis + the first numeric factorization

    def same_pattern(self, U: sp.csr_matrix) -> bool:
        return (U.shape[0] == self.n and U.nnz == len(self._ja) and np.array_equal(U.indptr, self._ia)
                and np.array_equal(U.indices, self._ja))

    def refactor(self, U: sp.csr_matrix):
        self._a[:] = U.data
        self._call(22, np.zeros(1), np.zeros(1), 1)     # numerical factorization only


_counter: dict = {}          # the last count's handle, per thread (one entry: the newest pattern)


def inertia(A, ordering: int | None = None) -> tuple[int, int] | None:
    """(positive, negative) eigenvalue counts of symmetric ``A`` from one ``mtype = -2``
    factorization, or None when the count cannot be trusted (perturbed pivots, a zero
    pivot, counts not adding up to ``n``).

    The handle of the last count is kept (one per thread): a matrix of the same pattern and
    ordering is factored again without a new analysis (the result is the same: PARDISO's
    analysis depends on the pattern only).
    """
    U = _upper_csr(A)
    key = threading.get_ident()
    f = _counter.pop(key, None)
    try:
        if f is not None and f._open and f.ordering == ordering and f.same_pattern(U):
            f.refactor(U)
        else:
            if f is not None:
                f.close()
            f = _Counter(U, ordering)
            f.ordering = ordering
    except PardisoError:
        return None
    pos, neg, perturbed = f.inertia()
    _counter[key] = f
    if perturbed or pos + neg != f.n:
        return None
    return pos, neg


def release_counts():
    """Free the kept count handles (their factor's memory)."""
    while _counter:
        _, f = _counter.popitem()
        f.close()
