"""The fast engine's random streams against numpy's own SeedSequence and Generator.

The reference is numpy itself (Source: numpy.random.SeedSequence.spawn / generate_state and
Generator.random, the SimPy model's streams): the seeding words computed in bulk must equal
the words numpy's SeedSequence gives, for every kind of seed numpy accepts.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.simulate.fast import hours_of_day
from planner.simulate.fast_streams import draw_block, spawned_state_words
from planner.simulate.stays import Empirical, Exponential, Gamma, Lognormal

SEEDS = [
    0,
    2024,
    2**32 - 1,
    2**32,  # two words
    2**128 + 77,  # five words: longer than the pool
    [1, 2, 3, 4, 5, 6],
    np.array([9, 2**40], dtype=np.uint64),
    np.random.SeedSequence(77).spawn(2)[1],  # what the pipeline passes
    np.random.SeedSequence(123, spawn_key=(4, 5, 6, 7, 8)),
    np.random.SeedSequence(np.array([3, 4], dtype=np.uint32)),
]


def numpy_words(seed, path: int) -> np.ndarray:
    base = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    parent = np.random.SeedSequence(base.entropy, spawn_key=(*base.spawn_key, path))
    return np.array([child.generate_state(4, np.uint64) for child in parent.spawn(3)])


@pytest.mark.parametrize("seed", SEEDS, ids=range(len(SEEDS)))
@pytest.mark.parametrize("first_path", [0, 1, 4095, 2**31, 2**32 - 3])
def test_bulk_words_equal_numpy_seed_sequence(seed, first_path):
    words = spawned_state_words(seed, 5, first_path)
    for i in range(5):
        if first_path + i < 2**32:
            np.testing.assert_array_equal(words[i], numpy_words(seed, first_path + i))


def test_path_numbers_beyond_32_bits_fall_back_to_numpy():
    words = spawned_state_words(5, 2, 2**32 - 1)  # the second path number needs two words
    np.testing.assert_array_equal(words[1], numpy_words(5, 2**32))


def test_generators_from_words_draw_the_spawned_streams():
    seed = np.random.SeedSequence(9).spawn(2)[1]
    totals = np.array([3, 0, 7, 5])
    order = np.array([2, 3, 0, 1])
    elapsed = np.array([0.5, 2.0, 9.0])
    stays = Lognormal.from_mean_sd(5.0, 4.0)
    draws = draw_block(seed, 10, totals, order, stays, elapsed)
    for row, i in enumerate(order):
        children = [np.random.default_rng(s) for s in numpy_words_seeds(seed, 10 + i)]
        n = totals[i]
        uniforms = children[0].random(2 * n)  # hours of day, then times within the hour
        np.testing.assert_array_equal(draws.hour_uniforms[row, :n], uniforms[:n])
        np.testing.assert_array_equal(draws.within_uniforms[row, :n], uniforms[n:])
        np.testing.assert_array_equal(draws.stay_days[row, :n], stays.sample(children[1], n))
        expected = stays.sample_remaining(children[2], elapsed)
        np.testing.assert_array_equal(draws.remaining_days[i], expected)


def numpy_words_seeds(seed, path: int) -> list[np.random.SeedSequence]:
    parent = np.random.SeedSequence(seed.entropy, spawn_key=(*seed.spawn_key, path))
    return parent.spawn(3)


class OtherDraws:
    """Remaining stays drawn with ``rng.exponential``: not one uniform from rng.random."""

    def sample(self, rng, size):
        return rng.exponential(3.0, size)

    def sample_remaining(self, rng, elapsed):
        return rng.exponential(3.0, np.shape(elapsed))


@pytest.mark.parametrize(
    "stays",
    [Gamma.from_mean_sd(4.0, 3.0), Exponential.from_mean(2.0),
     Empirical(np.array([0.5, 1.0, 2.0, 3.5, 8.0, 20.0])), OtherDraws()],
)  # fmt: skip
def test_remaining_stays_in_bulk_equal_path_by_path(stays):
    totals = np.array([2, 4, 1])
    order = np.argsort(-totals, kind="stable")
    elapsed = np.array([0.0, 1.5, 4.0, 30.0])
    draws = draw_block(31, 0, totals, order, stays, elapsed)
    for i in range(3):
        rng = np.random.default_rng(numpy_words_seeds(np.random.SeedSequence(31), i)[2])
        np.testing.assert_array_equal(draws.remaining_days[i], stays.sample_remaining(rng, elapsed))


@pytest.mark.parametrize(
    "profile",
    [np.full(24, 1 / 24), np.r_[np.zeros(6), np.full(12, 1 / 12), np.zeros(6)],
     np.r_[1.0, np.zeros(23)], np.random.default_rng(3).dirichlet(np.full(24, 0.3))],
)  # fmt: skip
def test_hours_of_day_invert_the_cumulative_profile(profile):
    # Source: numpy Generator.choice with p inverts cdf = cumsum(p) / cumsum(p)[-1] by
    # searchsorted(cdf, u, "right") (the reference here); u at bucket edges and at the
    # cumulative shares themselves are the hard cases.
    cdf = (profile / profile.sum()).cumsum()
    cdf /= cdf[-1]
    uniforms = np.r_[np.random.default_rng(4).random(20_000), np.arange(4096) / 4096, cdf]
    uniforms = uniforms[uniforms < 1][None, :]
    expected = cdf.searchsorted(uniforms, side="right")
    np.testing.assert_array_equal(hours_of_day(uniforms, profile), expected)
