"""The diagonal of the inverse of a sparse symmetric positive-definite matrix, without forming
the inverse (docs/methods.md §5.2): every species' variance in a large network.

``N = P (I + L) D (I + L)ᵀ Pᵀ`` is factorised with an approximate-minimum-degree ordering
(the QDLDL factorisation of the ``qdldl`` package); then Takahashi's recurrences (Takahashi,
Fagan & Chen 1973; Erisman & Tinney, Comm. ACM 18 (1975) 177) give the entries of
``Z = N⁻¹`` on the pattern of the factor, column by column from the last:

    Z[S, j] = −Z[S, S] · L[S, j]        Z[j, j] = 1/D[j] − L[S, j]ᵀ · Z[S, j]

where ``S`` is the pattern of column ``j`` of ``L`` below the diagonal. The pattern of a
Cholesky factor is closed under this recurrence (its graph is chordal), so no entry outside
it is ever needed. The cost is Σ |S|² over the columns: small for networks whose species
are linked to a few related species and to common hubs (as thermochemical networks are),
prohibitive for networks wired at random, which the size check (:func:`factor_size_hint`)
refuses before anything is factorised.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

__all__ = ["DENSE_MAX", "MAX_FACTOR_ENTRIES", "MAX_RECURRENCE_WORK", "factor_size_hint", "feasible",
           "inverse_diagonal"]

#: Largest factor (entries below the diagonal) the exact diagonal is computed for; about
#: 0.5 GB of working memory with the recurrences' storage.
MAX_FACTOR_ENTRIES = 20_000_000
#: Largest estimated work of the recurrences, Σ|S|² ≈ (factor size)² / n (about half a
#: minute on one laptop core at this bound).
MAX_RECURRENCE_WORK = 400_000_000


def feasible(n_mat: sp.spmatrix) -> tuple[bool, str]:
    """Whether the exact diagonal of ``N⁻¹`` is within the memory and work bounds, and if
    not, why (in words)."""
    n = n_mat.shape[0]
    if n <= DENSE_MAX:
        return True, ""
    hint = factor_size_hint(n_mat)
    work = hint * hint / max(n, 1)
    if hint > MAX_FACTOR_ENTRIES:
        return False, (f"its factor would need about {hint:.2g} entries (limit "
                       f"{MAX_FACTOR_ENTRIES:.2g})")
    if work > MAX_RECURRENCE_WORK:
        return False, (f"its factor (about {hint:.2g} entries for {n} unknowns) would take "
                       f"about {work:.2g} operations (limit {MAX_RECURRENCE_WORK:.2g})")
    return True, ""


def factor_size_hint(n_mat: sp.spmatrix, *, hub_degree: int | None = None) -> int:
    """An upper estimate of the factor's size, entries: the envelope of a reverse
    Cuthill–McKee ordering of the matrix without its hub columns (those linked to more than
    ``hub_degree`` others, ordered last by any fill-reducing ordering), plus a full row for
    each hub. A fill-reducing ordering does not do worse than this on the networks where it
    is small; on a randomly wired network it is of order n², and the exact diagonal is not
    attempted."""
    from scipy.sparse.csgraph import reverse_cuthill_mckee

    a = sp.csr_matrix(n_mat)
    n = a.shape[0]
    degree = np.diff(a.indptr)
    limit = hub_degree if hub_degree is not None else max(64, int(4 * np.sqrt(n)))
    hubs = np.flatnonzero(degree > limit)
    keep = np.setdiff1d(np.arange(n), hubs)
    sub = a[keep][:, keep]
    order = reverse_cuthill_mckee(sp.csr_matrix(sub), symmetric_mode=True)
    rank = np.empty(order.size, dtype=np.int64)
    rank[order] = np.arange(order.size)
    coo = sp.coo_matrix(sub)
    ri, ci = rank[coo.row], rank[coo.col]
    lower = ri > ci
    first = np.full(order.size, np.iinfo(np.int64).max)
    np.minimum.at(first, ri[lower], ci[lower])
    has = first < np.iinfo(np.int64).max
    envelope = int(np.sum(np.arange(order.size)[has] - first[has]))
    return envelope + int(hubs.size) * n


#: Up to this size the diagonal comes from a dense Cholesky factor and its triangular
#: inverse (LAPACK dpotrf, dtrtri: about 4 s and 0.9 GB at 6,000 unknowns), whatever the
#: wiring; faster than the recurrences' loop for a factor that fills in.
DENSE_MAX = 6000


def inverse_diagonal(n_mat: sp.spmatrix) -> np.ndarray:
    """``diag(N⁻¹)`` of a sparse symmetric positive-definite ``N`` (see the module
    docstring; up to :data:`DENSE_MAX` unknowns by a dense Cholesky factorisation).

    Raises
    ------
    numpy.linalg.LinAlgError
        ``N`` is not positive definite (a pivot ≤ 0: the data leave a direction
        undetermined).
    """
    import qdldl

    n_csc = sp.csc_matrix(n_mat, dtype=float)
    n = n_csc.shape[0]
    if n <= DENSE_MAX:
        from scipy.linalg import lapack

        factor, info = lapack.dpotrf(n_csc.toarray(), lower=1, clean=1)
        if info != 0:
            raise np.linalg.LinAlgError(f"the matrix is not positive definite (pivot {info})")
        inv_factor, info = lapack.dtrtri(factor, lower=1, overwrite_c=1)
        if info != 0:
            raise np.linalg.LinAlgError(f"the factor is singular (pivot {info})")
        # N⁻¹ = L⁻ᵀ L⁻¹: its diagonal is the column sums of squares of L⁻¹
        return np.einsum("ij,ij->j", inv_factor, inv_factor)
    try:
        solver = qdldl.Solver(n_csc)
    except (ValueError, RuntimeError) as exc:  # a zero pivot
        raise np.linalg.LinAlgError(f"the matrix is singular ({exc})") from None
    lower, d, perm = solver.factors()
    if not np.all(d > 0):
        raise np.linalg.LinAlgError("the matrix is not positive definite")
    lower = sp.csc_matrix(lower)
    lower.sort_indices()
    indptr, indices, values = lower.indptr, lower.indices.astype(np.int64), lower.data
    # position of entry (row r, column c) = searchsorted(keys, c * n + r)
    cols = np.repeat(np.arange(n, dtype=np.int64), np.diff(indptr))
    keys = cols * n + indices
    z = np.zeros(values.size)
    zdiag = np.zeros(n)
    for j in range(n - 1, -1, -1):
        a, b = indptr[j], indptr[j + 1]
        if a == b:
            zdiag[j] = 1.0 / d[j]
            continue
        s = indices[a:b]
        lj = values[a:b]
        k = s.size
        block = np.diag(zdiag[s])
        if k > 1:
            lo, hi = np.tril_indices(k, -1)  # rows s[lo] > columns s[hi]
            pos = np.searchsorted(keys, s[hi] * n + s[lo])
            block[lo, hi] = z[pos]
            block[hi, lo] = z[pos]
        zj = -(block @ lj)
        z[a:b] = zj
        zdiag[j] = 1.0 / d[j] - lj @ zj
    out = np.empty(n)
    out[perm] = zdiag
    return out
