"""The block bootstrap's planes, computed for all resamples at once, equal one SVD each.

Reference: numpy's SVD of each resample's centred points (the least-squares plane's
normal is the right singular vector of the smallest singular value; Pearson 1901).
"""

from __future__ import annotations

import numpy as np

from mapsection.thickness.unit import _resampled_planes


def test_resampled_planes_match_an_svd_of_each_resample():
    rng = np.random.default_rng(7)
    # a dipping contact far from the origin (projected coordinates), with noise
    x = 604_000 + rng.uniform(0, 3000, 400)
    y = 5_218_000 + rng.uniform(0, 2000, 400)
    z = 1200 + 0.3 * (x - 604_000) - 0.1 * (y - 5_218_000) + rng.normal(0, 5, 400)
    xyz = np.column_stack([x, y, z])
    chunks = np.array_split(np.arange(400), 40)
    draws = rng.integers(len(chunks), size=(50, len(chunks)))
    normals, centroids = _resampled_planes(xyz, chunks, draws)
    for k in range(len(draws)):
        pts = xyz[np.concatenate([chunks[i] for i in draws[k]])]
        c = pts.mean(axis=0)
        n = np.linalg.svd(pts - c, full_matrices=False)[2][-1]
        n = n if n[2] >= 0 else -n
        assert np.allclose(centroids[k], c, rtol=0, atol=1e-6)
        assert np.allclose(normals[k], n, rtol=0, atol=1e-9)
