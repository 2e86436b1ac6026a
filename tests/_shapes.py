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


def _embed(P, d, rng, noise):
    """Planar points ``P`` in the first two of ``d`` coordinates, Gaussian noise sd ``noise``."""
    X = np.zeros((P.shape[0], max(d, P.shape[1])))
    X[:, :P.shape[1]] = P
    return X + rng.normal(0, noise, X.shape)


def _thinning(m, rng, length):
    """``m`` distances along a tail of ``length`` whose density falls linearly to 0 at the tip
    (inverse-CDF sampling of the density ``2 (1 - s / length) / length``)."""
    return length * (1.0 - np.sqrt(1.0 - rng.uniform(0, 1, m)))


def ring_with_tails(n, rng, d=10, share=0.08, lengths=(2.0, 2.0), angles=(0.0, 0.9 * np.pi),
                    noise=0.05):
    """A unit circle with tails leaving it radially, each ``share`` of the rows, thinning outward.

    Known structure: one loop and ``len(lengths)`` tails (a failure mode leaves the normal
    cycle and fewer rows reach further out).
    """
    nt = int(round(share * n))
    nr = n - nt * len(lengths)
    t = rng.uniform(0, 2 * np.pi, nr)
    parts = [np.column_stack([np.cos(t), np.sin(t)])]
    for length, a in zip(lengths, angles):
        r = 1.0 + _thinning(nt, rng, length)
        parts.append(np.column_stack([r * np.cos(a), r * np.sin(a)]))
    return _embed(np.vstack(parts), d, rng, noise)


def tree(n, rng, d=5, lengths=(1.0, 1.5, 2.5), noise=0.05):
    """Arms of unequal ``lengths`` from one point at equal angles, rows in proportion to length.

    Known structure: a tree with ``len(lengths)`` tails and one branch point.
    """
    k = len(lengths)
    share = np.asarray(lengths, dtype=np.float64) / sum(lengths)
    counts = np.floor(share * n).astype(int)
    counts[-1] = n - counts[:-1].sum()
    parts = []
    for j, (c, length) in enumerate(zip(counts, lengths)):
        a = 2 * np.pi * j / k
        s = rng.uniform(0, length, c)
        parts.append(np.column_stack([s * np.cos(a), s * np.sin(a)]))
    return _embed(np.vstack(parts), d, rng, noise)


def core_with_regimes(n, rng, d=6, share=0.06, noise=0.05):
    """A dense Gaussian core with two sparse straight regimes leaving it (thinning outward).

    Known structure: no loop, two tails.
    """
    nt = int(round(share * n))
    core = rng.normal(0, 0.3, (n - 2 * nt, 2))
    parts = [core]
    for a in (0.0, 2.2):
        r = 0.6 + _thinning(nt, rng, 3.0)
        parts.append(np.column_stack([r * np.cos(a), r * np.sin(a)]))
    return _embed(np.vstack(parts), d, rng, noise)


def two_loops(n, rng, d=5, noise=0.04):
    """Two unit circles touching at one point (a figure eight). Known: two loops."""
    t = rng.uniform(0, 2 * np.pi, n)
    side = rng.uniform(size=n) < 0.5
    P = np.column_stack([np.cos(t) + np.where(side, 1.0, -1.0), np.sin(t)])
    return _embed(P, d, rng, noise)


def gaussian_mixture(n, rng, d=8, centres=3, gap=6.0):
    """``centres`` unit Gaussian blobs ``gap`` apart. Known: components, no loop, no tail."""
    C = np.zeros((centres, d))
    C[:, 0] = gap * np.arange(centres)
    label = rng.integers(0, centres, n)
    return C[label] + rng.normal(0, 1.0, (n, d))


def blob(n, rng, d=10):
    """A standard Gaussian in ``d`` dimensions: noise only."""
    return rng.normal(0, 1.0, (n, d))


def cube(n, rng, d=5):
    """Uniform points in the unit ``d``-cube: noise only."""
    return rng.uniform(0, 1, (n, d))
