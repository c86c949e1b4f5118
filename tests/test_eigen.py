"""The eigensolver's guard against a numerically singular overlap (relbasis.eigen)."""

import numpy as np

from relbasis import eigen


def test_singular_overlap_falls_back_to_canonical_orthogonalisation():
    """S with an exact null direction (two identical functions): whether or not the LAPACK build
    lets Cholesky through, the roots come from canonical orthogonalisation, one combination is
    dropped, and every kept vector is S-normalised (common practice)."""
    rng = np.random.default_rng(3)
    A = rng.standard_normal((6, 6))
    S0 = A @ A.T + 6 * np.eye(6)
    H0 = rng.standard_normal((6, 6))
    H0 = H0 + H0.T
    T = np.vstack([np.eye(6), np.eye(6)[:1]])  # function 7 repeats function 1
    S, H = T @ S0 @ T.T, T @ H0 @ T.T
    system = eigen.solve(H, S)
    assert system.dropped == 1
    norms = np.einsum("ij,ij->j", system.vectors, S @ system.vectors)
    assert np.allclose(norms, 1.0, atol=1e-10)
    exact = np.sort(np.linalg.eigvals(np.linalg.solve(S0, H0)).real)
    assert np.allclose(system.energies, exact, rtol=1e-9, atol=1e-9)
