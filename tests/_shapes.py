"""Sample generators shared by the tests and the benchmark scripts (not collected as tests).

Each takes the caller's own seeded generator, so every test keeps its seed.
"""

import numpy as np


def noisy_circle(n, rng, noise=0.03):
    """``n`` points at uniform angles on the unit circle, plus Gaussian noise of sd ``noise``."""
    t = rng.uniform(0, 2 * np.pi, n)
    return np.column_stack([np.cos(t), np.sin(t)]) + rng.normal(0, noise, (n, 2))


def torus(n, rng, R=3.0, r=1.0, noise=0.0):
    """Points uniform in area on the torus ((R + r cos v) cos u, (R + r cos v) sin u, r sin v).

    The area element is r (R + r cos v) du dv, so v is drawn by rejection on
    R + r cos v (Diaconis, Holmes and Shahshahani, "Sampling from a manifold",
    2013; from memory). With ``noise`` > 0, Gaussian noise of that sd is added
    to every coordinate.
    """
    out, m = [], 0
    while m < n:
        u = rng.uniform(0, 2 * np.pi, 2 * n)
        v = rng.uniform(0, 2 * np.pi, 2 * n)
        keep = rng.uniform(0, R + r, 2 * n) < R + r * np.cos(v)
        u, v = u[keep], v[keep]
        out.append(np.column_stack([(R + r * np.cos(v)) * np.cos(u),
                                    (R + r * np.cos(v)) * np.sin(u), r * np.sin(v)]))
        m += u.size
    X = np.vstack(out)[:n]
    return X + rng.normal(0, noise, X.shape) if noise > 0 else X
