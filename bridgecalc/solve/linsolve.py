"""Linear solvers for the symmetric positive definite conduction systems.

The Galerkin matrix of steady conduction with surface resistances (or held
temperatures eliminated) is symmetric positive definite. The solver is picked
by size and by what is installed:

* ``pardiso``: MKL PARDISO through the optional ``pypardiso`` package
  (sparse LDLᵀ/Cholesky with nested-dissection ordering);
* ``cholmod``: CHOLMOD through the optional ``scikit-sparse`` package;
* ``superlu``: SciPy's SuperLU with a symmetric ordering (minimum degree on
  A + Aᵀ) and diagonal pivoting: always available, the fallback;
* ``multigrid``: conjugate gradients preconditioned by a geometric
  multigrid V-cycle on the chain of nested meshes the refinement made
  (:func:`bridgecalc.mesh.refine` records each mesh's interpolation from
  the coarser one). Coarse operators are the Galerkin products Pᵀ A P, so
  material jumps on the coarse meshes are represented exactly; one forward
  Gauss–Seidel sweep before and one backward sweep after the coarse
  correction keep the preconditioner symmetric (Hackbusch, *Multi-Grid
  Methods and Applications*, Springer 1985; Briggs, Henson & McCormick, *A
  Multigrid Tutorial*, SIAM 2000). Uses ``pyamg`` (a dependency) for its
  compiled Gauss–Seidel sweeps; used for large systems that have a chain;
* ``amg``: conjugate gradients preconditioned by smoothed-aggregation
  algebraic multigrid (``pyamg``), for the largest systems without a
  chain, where a direct factor costs too much memory.

Iterative solves are checked: one that does not reach :data:`CG_TOLERANCE`
within its iteration limit falls back to a direct factor instead of
returning an unconverged field, and later solves of the same system size
(the second calculation case) go to the direct factor at once. The
multigrid limit is low (:data:`MULTIGRID_MAX_ITERATIONS`) and foreseen from
the rate so far: on these 2D systems of 6 000 to 53 000 unknowns a direct
factor (SuperLU or PARDISO) costs as much as 35 to 60 multigrid iterations
(measured), more on larger ones (:func:`multigrid_limit`); the shipped
junctions need 11 to 30 at the default tolerance (up to 52 at 500 000
unknowns), and needle elements across foils, liners and membranes need 90 to
several hundred (point Gauss–Seidel cannot smooth errors constant across a
sheet the needles tie together).

All choices give the same answer to round-off; a test compares them.
"""

from __future__ import annotations

import functools
import importlib.util
import os

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

#: Unknowns from which AMG-preconditioned CG replaces the direct solvers.
AMG_FROM = 400_000
#: Below this many unknowns SuperLU is as fast as the optional factorisations.
DIRECT_SMALL = 10_000
#: Unknowns from which geometric multigrid replaces the direct solvers
#: when the mesh has a refinement chain.
MULTIGRID_FROM = 5_000
#: Least ratio of unknowns between consecutive multigrid levels; finer steps
#: of an adaptive chain are skipped (their interpolations multiplied) [-].
MULTIGRID_COARSENING = 3.0
#: Relative residual ‖b − Ax‖/‖b‖ an iterative solve must reach [-].
CG_TOLERANCE = 1e-10
#: Iterations after which an AMG-preconditioned solve is declared failed.
CG_MAX_ITERATIONS = 500
#: Iterations after which a multigrid-preconditioned solve of up to
#: MULTIGRID_LIMIT_SIZE unknowns gives way to a direct factor: about what one
#: costs there, twice what the shipped junctions need (11–30) [-].
MULTIGRID_MAX_ITERATIONS = 60
#: Above this many unknowns the limit grows as √n: a nested-dissection factor
#: of a 2D mesh costs O(n^1.5) and a V-cycle O(n) (George, SIAM J. Numer. Anal.
#: 10, 1973, from memory), so a factor is worth more iterations on larger
#: systems (measured: SuperLU as 120–160 iterations at 126 000 unknowns, 210–
#: 230 at 503 000, on the ground floor's uniform meshes) [-].
MULTIGRID_LIMIT_SIZE = 50_000
#: Every this many iterations a multigrid-preconditioned solve checks whether
#: its mean rate so far would need more than :func:`multigrid_limit` [-].
FORESIGHT = 10

@functools.cache
def available(name: str) -> bool:
    """Whether an optional backend can be imported (checked once)."""
    module = {"pardiso": "pypardiso", "cholmod": "sksparse", "amg": "pyamg",
              "multigrid": "pyamg"}.get(name)
    ok = module is None or importlib.util.find_spec(module) is not None
    if ok and name == "pardiso":
        # MKL PARDISO is x86-only; a broken MKL install must not break runs
        try:
            import pypardiso  # noqa: F401
        except Exception:                                   # pragma: no cover
            ok = False
    return ok


def backends() -> list[str]:
    """Names of the backends usable here, fastest first."""
    return [b for b in BACKENDS if available(b)]


BACKENDS = ("pardiso", "cholmod", "superlu", "multigrid", "amg")


def choose(n: int, preferred: str | None = None, chain: bool = False) -> str:
    """The backend for a system of ``n`` unknowns.

    ``preferred`` (or the environment variable ``BRIDGECALC_SOLVER``) forces a
    backend when it is available (``multigrid`` only with a refinement
    ``chain``); unknown names raise ``ValueError``.
    """
    preferred = preferred or os.environ.get("BRIDGECALC_SOLVER") or None
    if preferred is not None:
        if preferred not in BACKENDS:
            raise ValueError(f"unknown linear solver {preferred!r}; choose from "
                             + ", ".join(BACKENDS))
        if available(preferred) and (preferred != "multigrid" or chain):
            return preferred
    if chain and n >= MULTIGRID_FROM and available("multigrid"):
        return "multigrid"
    if n >= AMG_FROM and available("amg"):
        return "amg"
    if n < DIRECT_SMALL:
        return "superlu"
    for name in ("pardiso", "cholmod"):
        if available(name):
            return name
    return "superlu"


def multigrid_limit(n: int) -> int:
    """Iterations a multigrid-preconditioned solve of ``n`` unknowns may take
    before it gives way to a direct factor: :data:`MULTIGRID_MAX_ITERATIONS`,
    times √(n / :data:`MULTIGRID_LIMIT_SIZE`) above that size [-]."""
    return int(MULTIGRID_MAX_ITERATIONS * max(1.0, n / MULTIGRID_LIMIT_SIZE) ** 0.5)


class SolverFailed(RuntimeError):
    """An iterative solve did not reach its tolerance."""


class SPDSolver:
    """Solves A x = b for SPD matrices that share one sparsity pattern.

    Reuse across the two calculation cases: an AMG hierarchy built for the
    first matrix preconditions CG for the next one (they differ only in the
    surface-resistance terms); CHOLMOD reuses its symbolic analysis.

    Parameters
    ----------
    backend : str, optional
        Force a backend; by default :func:`choose` picks one per size.
    """

    def __init__(self, backend: str | None = None):
        self.backend = backend
        self.used: str | None = None
        self._amg = None
        self._multigrid = None
        self._cholmod_symbolic = None
        self._direct_for: tuple | None = None   # shape an iterative solve failed on
        self.iterations = 0

    def __getstate__(self):
        # factorisations and hierarchies are rebuilt on demand, not pickled
        return {**self.__dict__, "_amg": None, "_multigrid": None, "_cholmod_symbolic": None}

    def solve(self, matrix: sp.spmatrix, rhs: np.ndarray, prolongations=(),
              initial=None) -> np.ndarray:
        """x with A x = b [same units as b / A], for one or several right-hand sides.

        Several right-hand sides share one factorisation (direct backends) or
        one multigrid or AMG hierarchy (iterative backends).

        Parameters
        ----------
        matrix : sparse matrix, shape (n, n)
        rhs : ndarray, shape (n,) or (n, k)
        prolongations : sequence of sparse matrices, optional
            Interpolations from each coarser nested mesh to the next finer
            one, finest first (the first has n rows); enables ``multigrid``.
        initial : ndarray, shape like ``rhs``, optional
            Starting guess for the iterative backends (e.g. the solution on
            the coarser mesh, interpolated); direct backends ignore it.
        """
        rhs = np.asarray(rhs, dtype=float)
        return np.reshape(self._solve(sp.csr_matrix(matrix), rhs, prolongations, initial),
                          rhs.shape)

    def _solve(self, matrix, rhs, prolongations, initial):
        n = matrix.shape[0]
        chain = bool(prolongations) and prolongations[0].shape[0] == n
        backend = choose(n, self.backend, chain)
        if backend in ("multigrid", "amg") and self._direct_for == matrix.shape:
            # it failed on this system already (the other calculation case)
            self.iterations = 0
            self.used = f"superlu (after {backend} did not converge)"
            return _superlu(matrix, rhs)
        self.used = backend
        if backend == "pardiso":
            return _pardiso(matrix, rhs)
        if backend == "cholmod":
            return self._cholmod(matrix, rhs)
        if backend == "superlu":
            return _superlu(matrix, rhs)
        if backend == "multigrid":
            if self._multigrid is None or self._multigrid.shape != matrix.shape:
                self._multigrid = Multigrid(matrix, prolongations)
            preconditioner, limit = self._multigrid.preconditioner(), multigrid_limit(n)
        else:
            preconditioner, limit = self._amg_preconditioner(matrix), None
        if rhs.ndim == 1:
            return self._cg(matrix, rhs, preconditioner, initial, limit, backend == "multigrid")
        columns, spent = [], 0
        for c in range(rhs.shape[1]):
            guess = None if initial is None else initial[:, c]
            if self._direct_for == matrix.shape:      # an earlier column gave way
                columns.append(None)
                continue
            columns.append(self._cg(matrix, rhs[:, c], preconditioner, guess, limit,
                                    backend == "multigrid"))
            spent += self.iterations
        if any(x is None for x in columns):
            # one factor for every column still to do
            rest = [c for c, x in enumerate(columns) if x is None]
            solved = _superlu(matrix, rhs[:, rest])
            for k, c in enumerate(rest):
                columns[c] = solved[:, k]
        self.iterations = spent
        return np.column_stack(columns)

    def _cholmod(self, matrix, rhs):
        from sksparse.cholmod import analyze
        a = matrix.tocsc()
        if self._cholmod_symbolic is None or self._cholmod_symbolic[0] != a.nnz:
            self._cholmod_symbolic = (a.nnz, analyze(a))
        factor = self._cholmod_symbolic[1].cholesky(a)
        return factor(rhs)

    def _amg_preconditioner(self, matrix):
        import pyamg
        if self._amg is None or self._amg.levels[0].A.shape != matrix.shape:
            self._amg = pyamg.smoothed_aggregation_solver(
                matrix, symmetry="symmetric", strength="symmetric", max_coarse=500,
                presmoother=("gauss_seidel", {"sweep": "symmetric"}),
                postsmoother=("gauss_seidel", {"sweep": "symmetric"}))
        return self._amg.aspreconditioner(cycle="V")

    def _cg(self, matrix, rhs, preconditioner, initial=None, limit=None, foresee=False):
        """Preconditioned CG with a checked residual, or a direct fallback.

        ``self.iterations`` is the number of iterations spent, also when the
        solve gave up (one application of the preconditioner each).
        """
        limit = CG_MAX_ITERATIONS if limit is None else limit
        apply = preconditioner.matvec if hasattr(preconditioner, "matvec") else preconditioner
        applied = [0]

        def counted(r):
            applied[0] += 1
            return apply(r)

        x, iterations = conjugate_gradients(matrix, rhs, counted, CG_TOLERANCE, limit, initial,
                                            foresee)
        self.iterations = iterations if iterations is not None else applied[0]
        norm_b = float(np.sqrt(_dot(rhs, rhs)))
        relative = 0.0 if norm_b == 0.0 else float(np.sqrt(_dot(r := rhs - matrix @ x, r))) / norm_b
        if iterations is None or relative > 10 * CG_TOLERANCE:
            # never return an unconverged field: fall back to a direct factor
            self.used = f"superlu (after {self.used} did not converge)"
            self._direct_for = matrix.shape
            return _superlu(matrix, rhs)
        return x


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """a·b by NumPy's pairwise sum: no BLAS threads, the same digits on every machine."""
    return float(np.add.reduce(a * b))


def conjugate_gradients(matrix, rhs, preconditioner, rtol: float, max_iterations: int,
                        initial=None, foresee: bool = False):
    """Preconditioned conjugate gradients (Hestenes & Stiefel, J. Res.
    Nat. Bur. Standards 49, 1952; the preconditioned form as in Saad, *Iterative
    Methods for Sparse Linear Systems*, 2nd ed., SIAM 2003, Algorithm 9.1).

    Parameters
    ----------
    matrix : sparse matrix
        SPD.
    rhs : ndarray
    preconditioner : callable or LinearOperator
        SPD approximation of A⁻¹.
    rtol : float
        Stop when ‖b − A x‖ ≤ rtol ‖b‖ (recursively updated residual) [-].
    max_iterations : int
    initial : ndarray, optional
        Starting guess (default zero).
    foresee : bool
        Give up early, every :data:`FORESIGHT` iterations, when the mean
        residual reduction per iteration so far predicts more than
        ``max_iterations`` in all (the caller has a faster way then).

    Returns
    -------
    x : ndarray
    iterations : int or None
        None when ``max_iterations`` were not enough.
    """
    apply = preconditioner.matvec if hasattr(preconditioner, "matvec") else preconditioner
    b = np.asarray(rhs, dtype=float)
    limit = rtol * np.sqrt(_dot(b, b))
    if limit == 0.0:
        return np.zeros_like(b), 0
    if initial is None:
        x, r = np.zeros_like(b), b.copy()
    else:
        x = np.array(initial, dtype=float)
        r = b - matrix @ x
        if np.sqrt(_dot(r, r)) <= limit:
            return x, 0
    z = apply(r)
    p = z.copy()
    rz = _dot(r, z)
    start = np.sqrt(_dot(r, r))
    for k in range(1, max_iterations + 1):
        q = matrix @ p
        alpha = rz / _dot(p, q)
        x += alpha * p
        r -= alpha * q
        norm = np.sqrt(_dot(r, r))
        if norm <= limit:
            return x, k
        if foresee and k % FORESIGHT == 0:
            rate = (norm / start) ** (1.0 / k)          # mean reduction per iteration
            if rate >= 1.0 or k + np.log(limit / norm) / np.log(rate) > max_iterations:
                return x, None
        if k == max_iterations:
            break
        z = apply(r)
        rz, rz_old = _dot(r, z), rz
        p *= rz / rz_old
        p += z
    return x, None


class Multigrid:
    """Geometric multigrid V-cycle on nested meshes, as a CG preconditioner.

    Parameters
    ----------
    matrix : csr_matrix, shape (n, n)
        SPD system on the finest mesh. A hierarchy built for one matrix
        preconditions others with the same shape: the two calculation cases
        differ only in surface-resistance terms.
    prolongations : sequence of sparse matrices
        Interpolation from each coarser mesh to the next finer, finest first.
        Consecutive ones are multiplied until the levels differ by at least
        :data:`MULTIGRID_COARSENING` in size.
    """

    def __init__(self, matrix, prolongations):
        from pyamg.relaxation.relaxation import gauss_seidel
        self._smooth = gauss_seidel
        self.shape = matrix.shape
        self.operators, self.interpolations = [sp.csr_matrix(matrix)], []
        p = None
        steps = list(prolongations)
        for k, step in enumerate(steps):
            p = step if p is None else (p @ step).tocsr()
            coarse_size = p.shape[1]
            last = k == len(steps) - 1
            if self.operators[-1].shape[0] < MULTIGRID_COARSENING * coarse_size and not last:
                continue
            a = self.operators[-1]
            r = p.T.tocsr()
            self.interpolations.append((p.tocsr(), r))
            self.operators.append((r @ a @ p).tocsr())
            p = None
        self._coarse = _symmetric_lu(self.operators[-1])

    def cycle(self, b: np.ndarray, level: int = 0) -> np.ndarray:
        """One V-cycle from a zero start: an approximation of A⁻¹ b."""
        if level == len(self.interpolations):
            return self._coarse.solve(b)
        a = self.operators[level]
        p, r = self.interpolations[level]
        x = np.zeros_like(b)
        self._smooth(a, x, b, iterations=1, sweep="forward")
        x += p @ self.cycle(r @ (b - a @ x), level + 1)
        self._smooth(a, x, b, iterations=1, sweep="backward")
        return x

    def preconditioner(self) -> spla.LinearOperator:
        return spla.LinearOperator(self.shape, matvec=lambda b: self.cycle(np.ravel(b)),
                                   dtype=float)


def _symmetric_lu(matrix):
    """SuperLU factor with a symmetric ordering (minimum degree on A + Aᵀ) and
    diagonal pivots, as suits SPD matrices."""
    return spla.splu(sp.csc_matrix(matrix), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                     options={"SymmetricMode": True})


def _superlu(matrix, rhs):
    return _symmetric_lu(matrix).solve(np.asarray(rhs, dtype=float))


@functools.cache
def _pardiso_solver():
    """The one PARDISO solver object: building one searches the file system for MKL."""
    import ctypes
    import pypardiso
    solver = pypardiso.PyPardisoSolver(mtype=2)             # real SPD
    # one thread: deterministic sums, and no spinning threads on a busy machine
    try:
        solver.libmkl.MKL_Set_Num_Threads(ctypes.c_int(1))
    except AttributeError:                                  # pragma: no cover
        pass
    return solver


def _pardiso(matrix, rhs):
    solver = _pardiso_solver()
    solver.set_iparm(1, 1)                             # use the iparm values given here
    solver.set_iparm(2, 2)                             # nested dissection ordering (METIS)
    solver.set_iparm(10, 8)                            # pivot perturbation 1e-8 (MKL default)
    a = sp.triu(matrix, format="csr")
    a.sort_indices()
    x = solver.solve(a, np.asarray(rhs, dtype=float))
    solver.free_memory(everything=True)
    return np.asarray(x, dtype=float)


def one_blas_thread():
    """Context in which NumPy's and SciPy's BLAS use one thread.

    The systems here are sparse and their vectors short: BLAS threads only
    wake, spin and wait on one another (a study ran 1.5x slower with two
    threads on two busy cores), and one thread gives the same digits on every
    machine. Uses the optional ``threadpoolctl``; without it, nothing changes.
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:                                     # pragma: no cover
        import contextlib
        return contextlib.nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


def solve_spd(matrix, rhs, backend: str | None = None) -> np.ndarray:
    """One SPD solve with the backend :func:`choose` picks."""
    return SPDSolver(backend).solve(matrix, rhs)
