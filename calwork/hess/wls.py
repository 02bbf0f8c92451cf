"""Weighted least squares for a thermochemical network, dense or sparse (docs/methods.md §5.2).

The model is ``A x = y + e`` with ``cov(e) = V``. Rows are whitened (``V = L Lᵀ`` per block
of correlated rows, ``Aw = L⁻¹A``), the unknowns are split into connected components (a
network of unrelated parts solves as independent problems), and each component is solved

* **dense** (small components): SVD of the whitened matrix, which is rank revealing — the
  right singular vectors of zero singular values span the directions the data do not
  determine; ``cov(x̂) = (AwᵀAw)⁺``;
* **sparse** (large components): Jacobi-preconditioned conjugate gradients on the normal
  equations ``AwᵀAw x = Awᵀ yw`` with many right-hand sides at once (block form). The null
  space is found by random probes: for a random r, CG started at zero solves
  ``N x = N r``; ``r − x`` lies in the null space, and is zero when N has full rank.
  Covariances are computed only for requested columns.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from calwork.core.errors import ConvergenceError, NetworkError, UncertaintyError

__all__ = ["DENSE_MAX_UNKNOWNS", "ComponentSolution", "LinearSolution", "solve_wls"]

#: Components up to this many unknowns are solved densely (SVD) by default.
DENSE_MAX_UNKNOWNS = 600
_RCOND = 1e-10
_CG_RTOL = 1e-12
#: Row weights (1/u) spread wider than this make a single SVD of the whitened matrix call
#: well-determined directions null; the rank is then found from the unweighted matrix.
_WEIGHT_RATIO_MAX = 1e6


@dataclass
class ComponentSolution:
    """Solution of one connected component (internal record)."""

    columns: np.ndarray
    rows: np.ndarray
    x: np.ndarray
    rank: int
    null_basis: np.ndarray
    method: str
    cov: np.ndarray | None = None
    #: diag(A cov Aᵀ) of the component's (unwhitened) rows, dense only
    fit_variance: np.ndarray | None = None
    normal: sp.csr_matrix | None = field(default=None, repr=False)
    precond: np.ndarray | None = field(default=None, repr=False)
    iterations: int = 0

    def pinv_apply(self, c: np.ndarray) -> np.ndarray:
        """``N⁺ c`` for columns ``c`` (n_c × k), c projected off the null space first."""
        c = np.atleast_2d(c.T).T if c.ndim == 1 else c
        if self.null_basis.size:
            c = c - self.null_basis @ (self.null_basis.T @ c)
        if self.cov is not None:
            return self.cov @ c
        z, _ = _block_pcg(self.normal, c, self.precond)
        if self.null_basis.size:
            z = z - self.null_basis @ (self.null_basis.T @ z)
        return z


@dataclass
class LinearSolution:
    """Whole-network solution (internal record)."""

    x: np.ndarray
    determined: np.ndarray
    components: list[ComponentSolution]
    column_component: np.ndarray
    fitted: np.ndarray
    whitened_residual: np.ndarray
    fit_variance: np.ndarray | None
    rank: int
    method: str
    whitened_A: sp.csr_matrix = field(repr=False)
    whitened_y: np.ndarray = field(repr=False)
    whitening: list[tuple[np.ndarray, np.ndarray | None]] = field(repr=False,
                                                                  default_factory=list)

    @property
    def iterations(self) -> int:
        """Most conjugate-gradient iterations any sparse component needed (0: all dense)."""
        return max((c.iterations for c in self.components), default=0)

    def all_variances(self) -> tuple[np.ndarray, list[str]]:
        """The variance of every unknown (``NaN`` where not computed) and why any were not:
        dense components from their covariance, sparse full-rank components exactly from
        the diagonal of the inverse of their normal matrix (:mod:`calwork.hess.selinv`)."""
        from calwork.hess.selinv import feasible, inverse_diagonal

        out = np.full(self.x.size, np.nan)
        reasons: list[str] = []
        for comp in self.components:
            if comp.cov is not None:
                out[comp.columns] = np.diag(comp.cov)
                continue
            if comp.null_basis.size:
                reasons.append(f"a part of {comp.columns.size} unknowns leaves "
                               f"{comp.null_basis.shape[1]} direction(s) undetermined")
                continue
            ok, why = feasible(comp.normal)
            if not ok:
                reasons.append(f"a part of {comp.columns.size} unknowns is wired so widely "
                               f"(rows linking species at random) that {why}")
                continue
            try:
                out[comp.columns] = inverse_diagonal(comp.normal)
            except np.linalg.LinAlgError as exc:
                reasons.append(f"a part of {comp.columns.size} unknowns: {exc}")
        return out, reasons

    def null_projection(self, c: np.ndarray) -> float:
        """Norm of the part of ``c`` (over all unknowns) the data do not determine."""
        total = 0.0
        for comp in self.components:
            if comp.null_basis.size:
                total += float(np.sum((comp.null_basis.T @ c[comp.columns]) ** 2))
        return math.sqrt(total)

    def covariance_of(self, c: np.ndarray) -> np.ndarray:
        """``C cov(x̂) Cᵀ`` for rows ``c`` (k × n), components handled separately."""
        c = np.atleast_2d(c)
        out = np.zeros((c.shape[0], c.shape[0]))
        for comp in self.components:
            block = c[:, comp.columns]
            if not np.any(block):
                continue
            out += block @ comp.pinv_apply(block.T)
        return 0.5 * (out + out.T)


def _whiten(a: sp.csr_matrix, y: np.ndarray, u: np.ndarray,
            offdiag: dict[tuple[int, int], float]) -> tuple[sp.csr_matrix, np.ndarray, list]:
    m = a.shape[0]
    if np.any(~np.isfinite(u)) or np.any(u <= 0):
        bad = int(np.flatnonzero(~(np.isfinite(u) & (u > 0)))[0])
        raise NetworkError("every row needs a standard uncertainty > 0", found=float(u[bad]),
                           row=bad)
    scale = 1.0 / u
    aw = sp.diags(scale) @ a
    yw = y * scale
    blocks: list[tuple[np.ndarray, np.ndarray | None]] = []
    if not offdiag:
        return sp.csr_matrix(aw), yw, blocks
    i_idx = np.array([k[0] for k in offdiag] + [k[1] for k in offdiag])
    j_idx = np.array([k[1] for k in offdiag] + [k[0] for k in offdiag])
    graph = sp.coo_matrix((np.ones(i_idx.size), (i_idx, j_idx)), shape=(m, m))
    _, labels = connected_components(graph, directed=False)
    aw = sp.lil_matrix(aw)
    involved = np.unique(i_idx)
    a_csr = sp.csr_matrix(a)
    for lab in np.unique(labels[involved]):
        rows = np.flatnonzero(labels == lab)
        vb = np.diag(u[rows] ** 2)
        pos = {r: k for k, r in enumerate(rows)}
        for (i, j), v in offdiag.items():
            if i in pos and j in pos:
                vb[pos[i], pos[j]] = vb[pos[j], pos[i]] = v
        try:
            chol = np.linalg.cholesky(vb)
        except np.linalg.LinAlgError:
            raise NetworkError("the covariance of correlated determinations is not positive "
                               "definite", found=[int(r) for r in rows]) from None
        ab = sla.solve_triangular(chol, a_csr[rows].toarray(), lower=True)
        yw[rows] = sla.solve_triangular(chol, y[rows], lower=True)
        aw[rows] = ab
        blocks.append((rows, chol))
    return sp.csr_matrix(aw), yw, blocks


def _block_pcg(n: sp.csr_matrix, b: np.ndarray, precond: np.ndarray, *,
               rtol: float = _CG_RTOL, maxiter: int | None = None) -> tuple[np.ndarray, int]:
    """Jacobi-preconditioned CG on ``n X = b`` for every column of ``b`` at once.

    Columns that have converged are frozen (step 0) rather than removed, so every
    iteration is a handful of whole-array operations and one sparse matrix product.
    Returns the solution and the number of iterations; raises :class:`ConvergenceError`
    when a column has not reached ``rtol`` within the iteration limit.
    """
    b = np.asarray(b, dtype=float).reshape(b.shape[0], -1)
    x = np.zeros_like(b)
    r = b.copy()
    minv = (1.0 / precond)[:, None]
    z = minv * r
    p = z.copy()
    rz = np.einsum("ij,ij->j", r, z)
    bnorm = np.linalg.norm(b, axis=0)
    bnorm[bnorm == 0] = 1.0
    limit = maxiter or max(1000, 10 * b.shape[0])
    tol2 = (rtol * bnorm) ** 2
    active = np.einsum("ij,ij->j", r, r) > tol2
    it = 0
    while active.any() and it < limit:
        q = n @ p
        pq = np.einsum("ij,ij->j", p, q)
        ok = active & (pq > 0)
        alpha = np.where(ok, rz / np.where(ok, pq, 1.0), 0.0)
        x += alpha * p
        r -= alpha * q
        z = minv * r
        rz_new = np.einsum("ij,ij->j", r, z)
        beta = np.where(ok & (rz != 0), rz_new / np.where(rz != 0, rz, 1.0), 0.0)
        p = z + beta * p
        rz = rz_new
        still = np.einsum("ij,ij->j", r, r) > tol2
        stalled = still & ~ok
        active = ok & still
        it += 1
        if stalled.any():
            raise ConvergenceError(
                "conjugate gradients broke down on the network's normal equations (a search "
                "direction of zero curvature)", found=f"{int(stalled.sum())} column(s)")
    if active.any():
        worst = float(np.sqrt(np.max(np.einsum("ij,ij->j", r, r) / (bnorm**2))))
        raise ConvergenceError(
            "conjugate gradients did not converge on the network's normal equations",
            found=f"relative residual {worst:.3g} after {it} iterations",
            expected=f"≤ {rtol:g}")
    return x, it


def _solve_dense_direct(a_c: np.ndarray, yw: np.ndarray, a_orig: np.ndarray) -> tuple:
    """One SVD of the whitened matrix: rank-revealing while the row weights are of
    comparable size (see :data:`_WEIGHT_RATIO_MAX`)."""
    m, n = a_c.shape
    a_pad = a_c if m >= n else np.vstack([a_c, np.zeros((n - m, n))])
    u_, s, vt = np.linalg.svd(a_pad, full_matrices=False)
    tol = (s[0] if s.size else 0.0) * _RCOND
    rank = int(np.sum(s > tol)) if s.size and s[0] > 0 else 0
    ur, sr, vr = u_[:m, :rank], s[:rank], vt[:rank].T
    x = vr @ ((ur.T @ yw) / sr)
    cov = (vr / sr**2) @ vr.T
    null = vt[rank:].T
    fit_var = np.sum((a_orig @ cov) * a_orig, axis=1)
    return x, rank, null, cov, fit_var


def _solve_dense(a_c: np.ndarray, yw: np.ndarray, a_orig: np.ndarray) -> tuple:
    """Weighted least squares of one component.

    Which unknowns the data determine does not depend on the weights, so the rank and the
    null space come from the *unweighted* stoichiometry (rows scaled to unit length):
    a tiny (but positive) uncertainty, which makes the whitened matrix badly scaled, can
    then not pass for rank deficiency. The weighted problem is solved in the row space.
    """
    m, n = a_c.shape
    norms = np.linalg.norm(a_orig, axis=1)
    weights = np.linalg.norm(a_c, axis=1) / np.where(norms > 0, norms, 1.0)
    if weights.size and weights.max() <= _WEIGHT_RATIO_MAX * weights.min():
        return _solve_dense_direct(a_c, yw, a_orig)
    a_unit = a_orig / np.where(norms > 0, norms, 1.0)[:, None]
    a_pad = a_unit if m >= n else np.vstack([a_unit, np.zeros((n - m, n))])
    _, s, vt = np.linalg.svd(a_pad, full_matrices=False)  # a_pad has ≥ n rows: vt is n × n
    tol = (s[0] if s.size else 0.0) * _RCOND * max(m, n)
    rank = int(np.sum(s > tol)) if s.size and s[0] > 0 else 0
    v_r, null = vt[:rank].T, vt[rank:].T
    b = a_c @ v_r  # the whitened problem in row-space coordinates: full column rank
    ub, sb, vbt = np.linalg.svd(b, full_matrices=False)
    if sb.size and not sb[-1] > 0:
        raise UncertaintyError("the weighted network is singular in its own row space",
                               found=float(sb[-1]))
    z = vbt.T @ ((ub.T @ yw) / sb)
    x = v_r @ z
    w = v_r @ (vbt.T / sb)
    cov = w @ w.T
    fit_var = np.sum((a_orig @ cov) * a_orig, axis=1)
    return x, rank, null, cov, fit_var


def _solve_sparse(a_c: sp.csr_matrix, yw: np.ndarray, seed: int) -> tuple:
    n_mat = sp.csr_matrix(a_c.T @ a_c)
    diag = n_mat.diagonal().copy()
    diag[diag <= 0] = 1.0
    rhs = a_c.T @ yw
    x, iterations = _block_pcg(n_mat, rhs, diag)
    x = x[:, 0]
    ncols = n_mat.shape[0]
    rng = np.random.default_rng(seed)
    k = 4
    null = np.zeros((ncols, 0))
    while True:
        probes = rng.standard_normal((ncols, k))
        solved, it2 = _block_pcg(n_mat, n_mat @ probes, diag)
        iterations = max(iterations, it2)
        q = probes - solved
        uq, sq, _ = np.linalg.svd(q, full_matrices=False)
        big = sq > 1e-5 * math.sqrt(ncols)
        null = uq[:, big]
        if int(big.sum()) < k or k >= ncols:
            break
        k = min(2 * k, ncols)
    if null.size:
        x = x - null @ (null.T @ x)
    rank = ncols - null.shape[1]
    return x, rank, null, n_mat, diag, iterations


def solve_wls(
    a: sp.csr_matrix,
    y: np.ndarray,
    u: np.ndarray,
    offdiag: dict[tuple[int, int], float] | None = None,
    *,
    method: str = "auto",
    seed: int = 20240601,
) -> LinearSolution:
    """Solve the whitened network; see the module docstring.

    Parameters
    ----------
    a
        Design matrix (rows = determinations, columns = unknown Δ_fH°), kJ/mol per kJ/mol.
    y, u
        Measured values and standard uncertainties, kJ/mol.
    offdiag
        Covariances between rows ``{(i, j): cov}``, (kJ/mol)².
    method
        ``'auto'`` (dense for components up to :data:`DENSE_MAX_UNKNOWNS` unknowns),
        ``'dense'`` or ``'sparse'``.
    seed
        Seed of the random probes of the sparse null-space test (results do not depend on it
        beyond round-off).
    """
    a = sp.csr_matrix(a, dtype=float)
    m, n = a.shape
    aw, yw, blocks = _whiten(a, np.asarray(y, float).copy(), np.asarray(u, float),
                             offdiag or {})
    pattern = sp.csr_matrix((np.ones(aw.nnz), aw.indices, aw.indptr), shape=(m, n))
    bip = sp.bmat([[None, pattern], [pattern.T, None]], format="csr")
    _ncomp, labels = connected_components(bip, directed=False)
    row_lab, col_lab = labels[:m], labels[m:]
    x = np.zeros(n)
    fit_var = np.zeros(m)
    have_fit_var = True
    comps: list[ComponentSolution] = []
    column_component = np.full(n, -1)
    rank_total = 0
    used = set()
    for lab in np.unique(col_lab):
        cols = np.flatnonzero(col_lab == lab)
        rows = np.flatnonzero(row_lab == lab)
        if rows.size == 0:
            raise NetworkError("an unknown appears in no row", found=int(cols[0]))
        used.add(lab)
        a_c = aw[rows][:, cols]
        dense = method == "dense" or (method == "auto" and cols.size <= DENSE_MAX_UNKNOWNS)
        if dense:
            xc, rank, null, cov, fv = _solve_dense(a_c.toarray(), yw[rows],
                                                   a[rows][:, cols].toarray())
            comp = ComponentSolution(columns=cols, rows=rows, x=xc, rank=rank,
                                     null_basis=null, method="dense", cov=cov,
                                     fit_variance=fv)
            fit_var[rows] = fv
        else:
            xc, rank, null, nmat, diag, its = _solve_sparse(a_c, yw[rows], seed)
            comp = ComponentSolution(columns=cols, rows=rows, x=xc, rank=rank,
                                     null_basis=null, method="sparse", normal=nmat,
                                     precond=diag, iterations=its)
            have_fit_var = False
        if not np.all(np.isfinite(xc)):
            raise UncertaintyError("network solution is not finite (ill-conditioned data)")
        x[cols] = xc
        column_component[cols] = len(comps)
        comps.append(comp)
        rank_total += rank
    determined = np.ones(n, dtype=bool)
    for comp in comps:
        if comp.null_basis.size:
            weight = np.sqrt(np.sum(comp.null_basis**2, axis=1))
            determined[comp.columns[weight > 1e-8]] = False
    fitted = a @ x
    res_w = yw - aw @ x
    methods = {c.method for c in comps}
    return LinearSolution(
        x=x, determined=determined, components=comps, column_component=column_component,
        fitted=fitted, whitened_residual=res_w, fit_variance=fit_var if have_fit_var else None,
        rank=rank_total, method="+".join(sorted(methods)) or "dense", whitened_A=aw,
        whitened_y=yw, whitening=blocks,
    )


def solve_many_rhs(solution: LinearSolution, yw_samples: np.ndarray) -> np.ndarray:
    """Re-solve the network for many whitened right-hand sides (columns); Monte Carlo use."""
    n = solution.x.size
    out = np.zeros((n, yw_samples.shape[1]))
    aw = solution.whitened_A
    for comp in solution.components:
        rhs = aw[comp.rows][:, comp.columns].T @ yw_samples[comp.rows]
        out[comp.columns] = comp.pinv_apply(np.asarray(rhs))
    return out

