"""Random numbers of the fast ward engine, drawn for a block of paths into padded arrays.

Path ``i`` uses child ``i`` of ``SeedSequence(seed)`` and, within it, ``spawn(3)`` for arrival
times, stays of new patients and remaining stays of current inpatients, each a ``PCG64``
generator: the SimPy model's streams. Building those ``SeedSequence`` objects costs about 50 us
per path, so :func:`spawned_state_words` computes the words each child gives its ``PCG64``
(``generate_state(4, uint64)``) for all paths at once, with numpy's ``SeedSequence`` hash
(M. E. O'Neill's ``seed_seq`` design, numpy's constants) on uint32 arrays; only the path number
and child number differ between paths, so the mixing of the seed's own words is done once.
Every block checks its first path against numpy's ``SeedSequence`` and falls back to it on any
difference; the tests compare many more.

A path's numbers depend only on the seed and the path number, never on how the
paths are chunked. Remaining stays are computed for all paths in one ``sample_remaining``
call, which relies on its contract: one uniform per patient, drawn with ``rng.random``, patient
by patient. Stays of new patients are computed the same way, each path's uniforms drawn from
its own stream and transformed in one call, when the distribution samples by inverse
transform (the Kaplan-Meier stays learned from episodes do); a distribution that draws
otherwise (lognormal, gamma, Weibull) is detected and sampled path by path.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.random.bit_generator import ISeedSequence

_MASK = 0xFFFFFFFF
_INIT_A, _MULT_A = 0x43B0D7E5, 0x931E8875
_INIT_B, _MULT_B = 0x8B51F9DD, 0x58F38DED
_MIX_L, _MIX_R = 0xCA01F9DD, 0x4973F715
_POOL = 4
CHILDREN = 3  # arrival times, stays of new patients, remaining stays of current inpatients


def _base(seed: int | np.random.SeedSequence) -> np.random.SeedSequence:
    return seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)


def _hashmix(value, constant: int):
    """numpy's ``hashmix`` on a Python int or a uint32 array; returns (value, constant)."""
    value = value ^ constant
    constant = (constant * _MULT_A) & _MASK
    value = (value * constant) & _MASK
    return value ^ (value >> 16), constant


def _mix(x, y):
    """numpy's ``mix`` on Python ints or uint32 arrays (products reduced modulo 2^32)."""
    result = (((_MIX_L * x) & _MASK) - ((_MIX_R * y) & _MASK)) & _MASK
    return result ^ (result >> 16)


def _words32(value) -> list[int] | None:
    """An int or a flat sequence of ints as uint32 words, lowest first (None: not handled)."""
    if isinstance(value, int | np.integer) and value >= 0:
        value, words = int(value), []
        while True:
            words.append(value & _MASK)
            value >>= 32
            if not value:
                return words
    if isinstance(value, list | tuple | range | np.ndarray):
        words = []
        for item in value:
            if not isinstance(item, int | np.integer):
                return None
            words += _words32(item) or []
        return words
    return None


def _child_words_numpy(base, path: int) -> np.ndarray:
    """Reference: the words of the three children of path ``path`` from numpy itself."""
    parent = np.random.SeedSequence(base.entropy, spawn_key=(*base.spawn_key, path))
    return np.array([child.generate_state(4, np.uint64) for child in parent.spawn(CHILDREN)])


def _child_words_bulk(base, first_path: int, paths: int) -> np.ndarray | None:
    entropy, key = _words32(base.entropy), _words32(base.spawn_key)
    if entropy is None or key is None or first_path + paths > 2**32:
        return None
    prefix = entropy + [0] * (_POOL - len(entropy)) + key  # padded as numpy pads spawned ones
    pool, constant = [0] * _POOL, _INIT_A
    for i in range(_POOL):
        pool[i], constant = _hashmix(prefix[i], constant)
    for source in range(_POOL):
        for target in range(_POOL):
            if source != target:
                hashed, constant = _hashmix(pool[source], constant)
                pool[target] = _mix(pool[target], hashed)
    for word in [*prefix[_POOL:], np.arange(first_path, first_path + paths, dtype=np.uint32)]:
        for target in range(_POOL):
            hashed, constant = _hashmix(word, constant)
            pool[target] = _mix(pool[target], hashed)
    words = np.zeros((paths, CHILDREN, 2 * _POOL), dtype=np.uint32)
    for child in range(CHILDREN):
        mixed, child_constant = list(pool), constant
        for target in range(_POOL):
            hashed, child_constant = _hashmix(child, child_constant)
            mixed[target] = _mix(mixed[target], hashed)
        state_constant = _INIT_B  # generate_state: 8 uint32 words cycling over the pool
        for i in range(2 * _POOL):
            value = mixed[i % _POOL] ^ state_constant
            state_constant = (state_constant * _MULT_B) & _MASK
            value = value * state_constant
            words[:, child, i] = value ^ (value >> 16)
    return words.astype("<u4").view("<u8").astype(np.uint64)


def spawned_state_words(
    seed: int | np.random.SeedSequence, paths: int, first_path: int = 0
) -> np.ndarray:
    """(paths, 3, 4) uint64: for path ``first_path + i`` and child j, the words
    ``SeedSequence(seed).spawn(...)[first_path + i].spawn(3)[j].generate_state(4, uint64)``
    that seed its ``PCG64`` (the SimPy model's streams)."""
    base = _base(seed)
    words = _child_words_bulk(base, first_path, paths) if paths else None
    if words is not None and np.array_equal(words[0], _child_words_numpy(base, first_path)):
        return words
    empty = np.zeros((0, CHILDREN, 4), dtype=np.uint64)
    return np.array([_child_words_numpy(base, first_path + i) for i in range(paths)] or empty)


class _StateWords(ISeedSequence):
    """Hands a bit generator the seeding words computed for it."""

    def __init__(self, words: np.ndarray):
        self.words = words

    def generate_state(self, n_words, dtype=np.uint32):
        if dtype is not np.uint64 and np.dtype(dtype) != np.uint64 or n_words > self.words.size:
            raise ValueError("only the words computed for PCG64 are available")
        # The bit generator only reads the words while seeding itself: no copy needed.
        return self.words if n_words == self.words.size else self.words[:n_words].copy()


def _generator(words: np.ndarray) -> np.random.Generator:
    return np.random.Generator(np.random.PCG64(_StateWords(words)))


class _NotUniforms(Exception):
    """A stay distribution asked the stand-in generator for something else than uniforms."""


class _GivenUniforms:
    """Stands in for a Generator in ``sample_remaining``: one ``random(size)`` call, answered
    with uniforms drawn beforehand from each path's own stream."""

    def __init__(self, uniforms: np.ndarray):
        self.uniforms, self.used = uniforms, False

    def random(self, size=None):
        if self.used or size is None or int(np.prod(size)) != self.uniforms.size:
            raise _NotUniforms
        self.used = True
        return self.uniforms.reshape(size)

    def __getattr__(self, name):
        raise _NotUniforms


@dataclass(frozen=True)
class BlockDraws:
    """A block's random draws, rows in the order given (entries after each row's count are
    padding, never read): ``hour_uniforms`` and ``within_uniforms`` pick each arrival's hour of
    day and time within the hour (rows x slots), ``stay_days`` the stays of the arrivals in
    order (rows x slots), ``remaining_days`` the remaining stays of the current inpatients
    (paths in block order x inpatients)."""

    hour_uniforms: np.ndarray
    within_uniforms: np.ndarray
    stay_days: np.ndarray
    remaining_days: np.ndarray


def _from_uniforms(stays, uniforms: np.ndarray) -> np.ndarray:
    """``stays.sample`` given the uniforms it would draw (see :func:`_samples_uniforms`)."""
    return np.asarray(stays.sample(_GivenUniforms(uniforms), uniforms.size), dtype=float)


def _samples_uniforms(stays) -> bool:
    """Whether ``stays.sample(rng, n)`` draws exactly ``rng.random(n)`` and transforms each
    uniform alone (as inverse transforms do), so that the stays of many paths can be computed
    in one call from each path's own uniforms. Probed with uniforms standing in for a
    generator; a distribution that asks for anything else (``rng.lognormal``, ...) is sampled
    path by path."""
    probe = np.array([0.125, 0.5, 0.875])
    try:
        together = _from_uniforms(stays, probe)
        alone = [_from_uniforms(stays, probe[j : j + 1])[0] for j in range(probe.size)]
    except _NotUniforms:
        return False
    return together.shape == probe.shape and np.array_equal(together, alone)


def _remaining_in_bulk(stays, uniforms: np.ndarray, elapsed: np.ndarray) -> np.ndarray | None:
    given = _GivenUniforms(uniforms.ravel())
    try:
        remaining = stays.sample_remaining(given, np.tile(elapsed, uniforms.shape[0]))
    except _NotUniforms:
        return None
    return np.asarray(remaining, dtype=float).reshape(uniforms.shape) if given.used else None


def draw_block(seed, first_path, totals, order, stays, elapsed) -> BlockDraws:
    """Draw the block's numbers: path ``order[r]`` (block position; ``totals``: arrivals per
    path) fills row r. See the module docstring for the streams."""
    paths, inpatients = totals.size, elapsed.size
    slots = int(totals.max()) if paths else 0
    hour, within, stay = (np.zeros((paths, slots)) for _ in range(3))
    remaining = np.zeros((paths, inpatients))
    words = spawned_state_words(seed, paths, first_path)
    bulk = _samples_uniforms(stays)
    for row, i in enumerate(order.tolist()):
        n = int(totals[i])
        rng = _generator(words[i, 0])
        rng.random(out=hour[row, :n])
        rng.random(out=within[row, :n])
        if bulk:  # this path's uniforms now, all the block's stays at once below
            _generator(words[i, 1]).random(out=stay[row, :n])
        else:
            stay[row, :n] = stays.sample(_generator(words[i, 1]), n)
    if bulk:  # the padding is transformed too (never read): cheaper than picking it out
        stay = _from_uniforms(stays, stay.ravel()).reshape(stay.shape)
    if inpatients:
        for i in range(paths):
            _generator(words[i, 2]).random(out=remaining[i])
        bulk = _remaining_in_bulk(stays, remaining, elapsed)
        if bulk is None:  # the distribution does not draw one uniform per patient
            for i in range(paths):
                remaining[i] = stays.sample_remaining(_generator(words[i, 2]), elapsed)
        else:
            remaining = bulk
    return BlockDraws(hour, within, stay, remaining)
