"""The diagonal of the inverse by a sparse factorisation and Takahashi's recurrences, checked
against numpy's dense inverse (an independent general-purpose computation)."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from calwork.hess import selinv
from calwork.hess.selinv import factor_size_hint, inverse_diagonal


@pytest.fixture(params=["recurrences", "dense"])
def path(request, monkeypatch):
    """Both ways to the diagonal: the factor's recurrences and the dense Cholesky inverse."""
    monkeypatch.setattr(selinv, "DENSE_MAX", 0 if request.param == "recurrences" else 10**6)
    return request.param


@pytest.mark.parametrize(("n", "density", "seed"), [(1, 1.0, 1), (40, 0.1, 2), (300, 0.02, 3),
                                                    (800, 0.004, 4)])
def test_equals_the_dense_inverse(n, density, seed, path):
    rng = np.random.default_rng(seed)
    a = sp.random(n, n, density=density, random_state=rng)
    m = (a @ a.T + sp.diags(rng.uniform(0.1, 2.0, n))).tocsc()
    expected = np.diag(np.linalg.inv(m.toarray()))
    assert inverse_diagonal(m) == pytest.approx(expected, rel=1e-10)


def test_a_hub_and_chain_network_matrix(path):
    # a path graph plus one hub linked to every node: little fill with the hub last
    n = 3000
    main = np.full(n, 4.0)
    off = np.full(n - 1, -1.0)
    m = sp.diags([off, main, off], [-1, 0, 1], format="lil")
    m[:, 0] = -0.1
    m[0, :] = -0.1
    m[0, 0] = n * 0.02 + 4.0
    m = sp.csc_matrix(m)
    assert factor_size_hint(m, hub_degree=10) <= 3 * n
    expected = np.diag(np.linalg.inv(m.toarray()))
    assert inverse_diagonal(m) == pytest.approx(expected, rel=1e-10)


def test_singular_is_refused(path):
    m = sp.csc_matrix(np.array([[1.0, 1.0], [1.0, 1.0]]))
    with pytest.raises(np.linalg.LinAlgError):
        inverse_diagonal(m)


def test_the_size_hint_bounds_the_factor():
    import qdldl

    rng = np.random.default_rng(9)
    for n, density in ((200, 0.03), (500, 0.01)):
        a = sp.random(n, n, density=density, random_state=rng)
        m = (a @ a.T + sp.eye(n)).tocsc()
        lower, _d, _p = qdldl.Solver(m).factors()
        assert lower.nnz <= factor_size_hint(m)
