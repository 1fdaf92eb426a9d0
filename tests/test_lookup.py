"""Table lookups for inverse transforms give exactly numpy's searchsorted positions."""

from __future__ import annotations

import numpy as np
import pytest

from planner.simulate.lookup import UnitSearch
from planner.simulate.stays import MINIMUM_STAY_DAYS
from planner.simulate.survival import KaplanMeierStays


def awkward_values(rng, bits):
    """Sorted values in [0, 1] with duplicates, bucket edges, 0 and 1 and their neighbours."""
    edges = rng.integers(0, 2**bits + 1, 40) / 2**bits
    near = np.concatenate([np.nextafter(edges, 0), np.nextafter(edges, 2)])
    values = np.concatenate([rng.random(300), edges, edges[:5], near, [0.0, 1.0, 1.0]])
    return np.sort(np.clip(values, 0.0, 1.0))


@pytest.mark.parametrize("side", ["left", "right"])
@pytest.mark.parametrize("bits", [4, 12, 16])
def test_unit_search_gives_numpy_searchsorted(side, bits):
    # Source: numpy.searchsorted (reference implementation of the same positions).
    rng = np.random.default_rng(bits)
    values = awkward_values(rng, bits)
    x = np.concatenate([rng.random(20_000), values, np.nextafter(values, 0).clip(0), [0.0, 1.0]])
    search = UnitSearch(values, side, bits)
    np.testing.assert_array_equal(search(x), np.searchsorted(values, x, side))
    grid = np.sort(rng.random((50, 7)), axis=1)  # any shape
    np.testing.assert_array_equal(search(grid), np.searchsorted(values, grid, side))


def test_kaplan_meier_draws_are_the_inverse_transform_of_the_estimate():
    # Source: the inverse transform written out with numpy.searchsorted on the estimate
    # (the first step whose survival falls below the uniform), as the module docstring says.
    rng = np.random.default_rng(3)
    durations = np.round(rng.lognormal(1.5, 0.7, 2_000), 1)  # ties, like recorded stays
    observed = rng.random(2_000) > 0.1
    observed[np.argsort(durations)[-30:]] = False  # the longest still running: a tail
    stays = KaplanMeierStays(durations, observed)
    km = stays.estimate
    draws = stays.sample(np.random.default_rng(9), 50_000)
    u = 1.0 - np.random.default_rng(9).random(50_000)
    index = np.searchsorted(-km.survival, -u, "right")
    inside = index < km.times.size
    expected = km.times[np.minimum(index, km.times.size - 1)]
    tail = km.largest + stays.tail_mean_days * np.log(km.survival[-1] / u[~inside])
    expected[~inside] = tail
    assert (~inside).any() and inside.any()  # both branches are exercised
    np.testing.assert_array_equal(draws, np.maximum(expected, MINIMUM_STAY_DAYS))
