"""Microstate partition function: populations, macroscopic pKa and mean charge.

Each site is either in its reference form (acid protonated, base neutral) or
ionized. A microstate's log10 weight at a given pH is

    sum over protonated sites (pKa_i - pH)  -  sum over pairs q_i q_j W(d_ij)

(Henderson-Hasselbalch per site, plus the charge-charge term). Macroscopic pKa
values follow from the sums Z_k over microstates holding k protons:
pKa_k = log10(Z_k / Z_{k-1}). Exact enumeration covers up to ``MAX_EXACT_SITES``
sites; beyond that the sites farthest from the pH window are fixed in the form
they take inside the window and reported with their own microscopic pKa.

The formulas are written once (the functions under "Formulas" take Python
numbers and numpy arrays alike) and evaluated in one of two ways. Up to
``SMALL_SITES`` sites each microstate is a handful of Python numbers, since
numpy's fixed cost per call would be most of the time for 8 microstates;
larger molecules use numpy arrays over all microstates. Sums follow numpy's
order of addition in both, so both give the same log weights to the bit; the
fractions agree to an ulp or two, as numpy's exp may be a SIMD routine whose last
bit differs from libm's (tests/test_species_microstates.py checks both on random models).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Literal, TypeVar

import numpy as np

from annotate.results import Kind
from annotate.species.interactions import InteractionTable

#: 2**12 = 4096 microstates: about a millisecond; more grows as 2**n
MAX_EXACT_SITES = 12
#: sites whose pKa lies further than this outside every requested pH are fixed first
WINDOW_MARGIN = 6.0
#: sites closer than this in pKa titrate together rather than one after the other
COMPETING = 0.5
#: up to this many sites (8 microstates) a model is evaluated without numpy. The bound
#: also makes both paths' log weights agree exactly: a site then has at most two charged partners,
#: and the sum of two numbers does not depend on the order a matrix product adds them in
SMALL_SITES = 3
#: ln 10, the same double as numpy's np.log(10.0)
LN10 = math.log(10.0)

Matrix = tuple[tuple[float, ...], ...]
#: a Python number (one microstate) or a numpy array (all microstates)
N = TypeVar("N", float, np.ndarray)
#: charged sites: index lists (one microstate) or 0/1 arrays (all microstates)
C = TypeVar("C")
#: an interaction matrix: nested tuples or an array
W = TypeVar("W")


@dataclass(frozen=True, slots=True)
class Populations:
    """Microstate fractions at one pH."""

    charge_mean: float
    #: (state, fraction), most abundant first, ties in state order; cut at the limit asked for
    ranked: list[tuple[int, float]]


@dataclass(frozen=True, slots=True)
class StateList:
    """At most 8 microstates as Python numbers (numpy's cost per call would dominate)."""

    patterns: tuple[tuple[bool, ...], ...]  # per state, per site: protonated
    charges: tuple[int, ...]  # net charge of each state
    n_protons: tuple[int, ...]  # protons on the active sites
    log_base: tuple[float, ...]  # log10 weight without the pH term

    def fractions(self, ph: float) -> list[float]:
        log_w = [_at_ph(b, k, ph) for b, k in zip(self.log_base, self.n_protons, strict=True)]
        top = max(log_w)
        weights = [_relative(x, top, math.exp) for x in log_w]
        total = numpy_order_sum(weights)
        return [w / total for w in weights]

    def populations(self, ph: float, limit: int) -> Populations:
        fractions = self.fractions(ph)
        mean = numpy_order_sum([f * c for f, c in zip(fractions, self.charges, strict=True)])
        order = sorted(range(len(fractions)), key=lambda k: -fractions[k])[:limit]
        return Populations(mean, [(k, fractions[k]) for k in order])

    def pattern(self, state: int) -> tuple[bool, ...]:
        return self.patterns[state]

    def charge(self, state: int) -> int:
        return self.charges[state]

    def protonated_array(self) -> np.ndarray:
        return np.array(self.patterns, dtype=bool)


@dataclass(frozen=True, slots=True)
class StateArrays:
    """Microstates as numpy arrays, for molecules with more than ``SMALL_SITES`` sites."""

    protonated: np.ndarray  # (states, sites) bool
    charges: np.ndarray  # (states,) int
    n_protons: np.ndarray  # (states,) int
    log_base: np.ndarray  # (states,) float

    def fractions(self, ph: float) -> np.ndarray:
        log_w = _at_ph(self.log_base, self.n_protons, ph)
        weights = _relative(log_w, log_w.max(), np.exp)
        return weights / weights.sum()

    def populations(self, ph: float, limit: int) -> Populations:
        fractions = self.fractions(ph)
        mean = float((fractions * self.charges).sum())
        order = np.argsort(-fractions, kind="stable")[:limit]
        return Populations(mean, list(zip(order.tolist(), fractions[order].tolist(), strict=True)))

    def pattern(self, state: int) -> tuple[bool, ...]:
        return tuple(self.protonated[state].tolist())

    def charge(self, state: int) -> int:
        return int(self.charges[state])

    def protonated_array(self) -> np.ndarray:
        return self.protonated


@dataclass(frozen=True, slots=True)
class MicrostateModel:
    """Microstates of one molecule, pH independent; weights are evaluated per pH."""

    states: StateList | StateArrays
    macro_pka: tuple[float, ...]
    fixed_sites: tuple[int, ...]
    #: sites fixed although near the pH window, because of MAX_EXACT_SITES
    truncated: int
    w_like: Matrix  # (sites, sites) interaction between like charges
    w_opp: Matrix  # (sites, sites) interaction between opposite charges

    @property
    def protonated(self) -> np.ndarray:
        """(states, sites) bool: which sites hold their proton in each microstate."""
        return self.states.protonated_array()

    def fractions(self, ph: float) -> np.ndarray:
        """Population of each microstate at ``ph`` (they sum to one)."""
        return np.asarray(self.states.fractions(ph), dtype=float)

    def populations(self, ph: float, limit: int) -> Populations:
        """Mean charge and the ``limit`` most abundant microstates at ``ph``."""
        return self.states.populations(ph, limit)

    def pattern(self, state: int) -> tuple[bool, ...]:
        return self.states.pattern(state)

    def charge(self, state: int) -> int:
        return self.states.charge(state)

    def titration_pka(self, kinds: list[Kind], intrinsic: list[float]) -> list[float]:
        """Each site's pKa in the environment it titrates in.

        Walking up the pH scale, a site sees acids of clearly lower pKa already
        ionized (-1) and bases of clearly higher pKa still protonated (+1); each
        such charge shifts it by W(d). That is the value a chemist reads off the
        site's titration (glycine's COOH 2.3, not the 4.4 it has beside a neutral
        amine). Sites within ``COMPETING`` units compete for one proton; their
        coupling shows only in the macroscopic pKa values.
        """
        out = []
        for i, (kind_i, pka_i) in enumerate(zip(kinds, intrinsic, strict=True)):
            shift = 0.0
            for j, (kind_j, pka_j) in enumerate(zip(kinds, intrinsic, strict=True)):
                if i == j:
                    continue
                if kind_j == "acid" and pka_j < pka_i - COMPETING:
                    q_j = -1
                elif kind_j == "base" and pka_j > pka_i + COMPETING:
                    q_j = 1
                else:
                    continue
                charged_i = -1 if kind_i == "acid" else 1
                w = self.w_like[i][j] if charged_i == q_j else self.w_opp[i][j]
                shift -= w * q_j
            out.append(float(pka_i + shift))
        return out


def build_model(
    kinds: Sequence[Kind],
    pkas: Sequence[float],
    distances: Sequence[Sequence[int]] | np.ndarray,
    second_paths: Sequence[Sequence[int]] | np.ndarray,
    *,
    base_charge: int,
    ph_values: tuple[float, ...],
    table: InteractionTable,
    evaluation: Literal["auto", "python", "numpy"] = "auto",
) -> MicrostateModel:
    """Enumerate microstates; ``distances``/``second_paths`` are site-to-site bond counts.

    ``evaluation``: "auto" evaluates up to ``SMALL_SITES`` sites with Python numbers and
    more with numpy arrays (numpy's cost per call dominates small molecules); "python"
    or "numpy" forces one path. Both give the same weights to the bit, which the tests
    check through this switch."""
    pka = [float(p) for p in pkas]
    is_acid = tuple(int(k == "acid") for k in kinds)
    active, fixed, truncated = _split_active(pka, ph_values)
    mid = (min(ph_values) + max(ph_values)) / 2.0
    if not pka:
        return _without_sites(base_charge)
    background = tuple(p > mid for p in pka)  # the form a fixed site takes inside the window
    w_like, w_opp = _interaction_matrices(distances, second_paths, table)
    python = len(pka) <= SMALL_SITES if evaluation == "auto" else evaluation == "python"
    evaluate = _state_list if python else _state_arrays
    states, log_base = evaluate(pka, is_acid, tuple(active), background, w_like, w_opp, base_charge)
    macro = _macro_pka(log_base, len(active)) + tuple(pka[i] for i in fixed)
    return MicrostateModel(
        states=states,
        macro_pka=tuple(sorted(round(x, 3) for x in macro)),
        fixed_sites=tuple(fixed),
        truncated=truncated,
        w_like=w_like,
        w_opp=w_opp,
    )


@lru_cache(maxsize=16)
def _without_sites(base_charge: int) -> MicrostateModel:
    """The one-state model of a molecule without sites, built once per charge (it is immutable)."""
    states, log_base = _state_list([], (), (), (), (), (), base_charge)
    return MicrostateModel(states, _macro_pka(log_base, 0), (), 0, (), ())


# Formulas (each takes one microstate's Python numbers or numpy arrays over all of them)


def _site_charge(is_acid: N, protonated: N) -> N:
    """+1 on a protonated base, -1 on an ionized acid, 0 on a site in its reference form."""
    return protonated - is_acid


def _interaction_energy(pos: C, neg: C, w_like: W, w_opp: W, pair_sum: Callable[[C, W, C], N]) -> N:
    """0.5 * sum_ij q_i q_j W_ij, W by sign of q_i q_j; pos/neg mark the charged sites.

    ``pair_sum(left, w, right)`` is sum_j right_j * sum_i left_i w_ij. With arrays it
    is a product of (states, sites) matrices: the direct (states, sites, sites) form
    took gigabytes and seconds for a polymer with 150 sites.
    """
    like = pair_sum(pos, w_like, pos) + pair_sum(neg, w_like, neg)
    opposite = pair_sum(pos, w_opp, neg) + pair_sum(neg, w_opp, pos)
    return 0.5 * (like - opposite)


def _log_base(proton_sum: N, interaction: N) -> N:
    """log10 weight without the pH term: sum of pKa over protonated sites, minus W."""
    return proton_sum - interaction


def _at_ph(log_base: N, n_protons: N, ph: float) -> N:
    return log_base - n_protons * ph


def _relative(log_w: N, top: float, exp: Callable[[N], N]) -> N:
    """Weight relative to the largest one (scaled so that no weight overflows)."""
    return exp((log_w - top) * LN10)


def _macro_pka(log_base: Sequence[float], m: int) -> tuple[float, ...]:
    """pKa_k = log10 Z_k - log10 Z_(k-1), Z_k summed over the states holding k protons.

    Python numbers for either evaluation: a numpy call per proton count cost more than
    the sums for all but the largest molecules, and ``numpy_order_sum`` keeps numpy's bits.
    """
    log_z = []
    for group in _proton_groups(m):
        if len(group) == 1:  # 10**0 = 1 and log10(1) = 0, exactly
            log_z.append(log_base[group[0]] + 0.0)
            continue
        values = [log_base[s] for s in group]
        top = max(values)
        log_z.append(top + math.log10(numpy_order_sum([10.0 ** (x - top) for x in values])))
    return tuple(log_z[k] - log_z[k - 1] for k in range(1, m + 1))


@lru_cache(maxsize=MAX_EXACT_SITES + 1)
def _proton_groups(m: int) -> tuple[tuple[int, ...], ...]:
    """States holding k protons, for k = 0..m, each in state order."""
    counts = _proton_counts(m)
    return tuple(tuple(s for s, c in enumerate(counts) if c == k) for k in range(m + 1))


@lru_cache(maxsize=MAX_EXACT_SITES + 1)
def _proton_counts(m: int) -> tuple[int, ...]:
    return tuple(bin(s).count("1") for s in range(2**m))


# Evaluation with Python numbers, one microstate at a time


def _state_list(
    pka: list[float],
    is_acid: tuple[int, ...],
    active: tuple[int, ...],
    background: tuple[bool, ...],
    w_like: Matrix,
    w_opp: Matrix,
    base_charge: int,
) -> tuple[StateList, list[float]]:
    rows = _rows(is_acid, active, background)
    log_base = []
    for protons, pos, neg in zip(rows.protons, rows.pos, rows.neg, strict=True):
        # numpy's order for fewer than 8 terms: left to right from 0.0; the zero terms
        # of sites without their proton change no sum
        proton_sum = 0.0
        for i in protons:
            proton_sum += pka[i]
        # one charge or none: every pair term is zero, as the matrix form finds too
        energy = _interaction_energy(pos, neg, w_like, w_opp, _pair_sum_one) if len(pos) + len(neg) > 1 else 0.0
        log_base.append(_log_base(proton_sum, energy))
    charges = tuple(c + base_charge for c in rows.charges)
    states = StateList(rows.patterns, charges, _proton_counts(len(active)), tuple(log_base))
    return states, log_base


@dataclass(frozen=True, slots=True)
class _Rows:
    """The pKa-independent part of a small model, shared by molecules with the same sites."""

    patterns: tuple[tuple[bool, ...], ...]  # per state, per site: protonated
    charges: tuple[int, ...]  # net charge of the sites
    protons: tuple[tuple[int, ...], ...]  # active sites holding their proton, in site order
    pos: tuple[tuple[int, ...], ...]  # positive sites
    neg: tuple[tuple[int, ...], ...]  # negative sites


@lru_cache(maxsize=512)
def _rows(is_acid: tuple[int, ...], active: tuple[int, ...], background: tuple[bool, ...]) -> _Rows:
    patterns, charges, protons, pos, neg = [], [], [], [], []
    m = len(active)
    for s in range(2**m):
        bits = [bool(s >> t & 1) for t in range(m)]  # the state order of _states
        pattern = list(background)
        for bit, i in zip(bits, active, strict=True):
            pattern[i] = bit
        q = [_site_charge(a, int(p)) for a, p in zip(is_acid, pattern, strict=True)]
        patterns.append(tuple(pattern))
        charges.append(sum(q))
        protons.append(tuple(i for bit, i in zip(bits, active, strict=True) if bit))
        pos.append(tuple(i for i, x in enumerate(q) if x > 0))
        neg.append(tuple(i for i, x in enumerate(q) if x < 0))
    return _Rows(tuple(patterns), tuple(charges), tuple(protons), tuple(pos), tuple(neg))


def _pair_sum_one(left: list[int], w: Matrix, right: list[int]) -> float:
    """pair_sum for one microstate; ``left``/``right`` list the charged sites.

    Terms of uncharged sites are zeros in the matrix form, and adding a zero changes
    no sum, so summing the charged ones in the same order gives the same number.
    """
    total = 0.0
    for j in right:
        inner = 0.0
        for i in left:
            inner += w[i][j]
        total += inner
    return total


def numpy_order_sum(values: Sequence[float]) -> float:
    """Sum in numpy's order (pairwise, in blocks of eight), so both paths agree to the bit."""
    n = len(values)
    if n < 8:
        total = 0.0
        for value in values:
            total += value
        return total
    return 0.0 + _pairwise(values, 0, n)


def _pairwise(values: Sequence[float], start: int, n: int) -> float:
    if n < 8:
        total = 0.0
        for k in range(start, start + n):
            total += values[k]
        return total
    if n <= 128:
        r = list(values[start : start + 8])
        i = 8
        while i < n - n % 8:
            for j in range(8):
                r[j] += values[start + i + j]
            i += 8
        total = ((r[0] + r[1]) + (r[2] + r[3])) + ((r[4] + r[5]) + (r[6] + r[7]))
        for k in range(start + i, start + n):
            total += values[k]
        return total
    half = n // 2
    half -= half % 8
    return _pairwise(values, start, half) + _pairwise(values, start + half, n - half)


# Evaluation with numpy arrays over all microstates


def _state_arrays(
    pka: list[float],
    is_acid: tuple[int, ...],
    active: tuple[int, ...],
    background: tuple[bool, ...],
    w_like: Matrix,
    w_opp: Matrix,
    base_charge: int,
) -> tuple[StateArrays, list[float]]:
    layout = _layout(is_acid, active, background)
    interaction = _interaction_energy(layout.pos, layout.neg, np.array(w_like), np.array(w_opp), _pair_sum_arrays)
    m = len(active)
    active_pka = np.array([pka[i] for i in active], dtype=float)
    log_base = _log_base((_states(m) * active_pka).sum(axis=1), interaction)
    arrays = StateArrays(layout.protonated, layout.charges + base_charge, layout.n_protons, log_base)
    return arrays, log_base.tolist()


@dataclass(frozen=True, slots=True)
class _Layout:
    """The pKa-independent arrays of a model, shared by molecules with the same sites."""

    protonated: np.ndarray  # (states, sites) bool
    pos: np.ndarray  # (states, sites) 1.0 where a site is positive
    neg: np.ndarray  # (states, sites) 1.0 where a site is negative
    charges: np.ndarray  # (states,) net charge of the sites
    n_protons: np.ndarray  # (states,)


@lru_cache(maxsize=512)
def _layout(is_acid: tuple[int, ...], active: tuple[int, ...], background: tuple[bool, ...]) -> _Layout:
    m = len(active)
    protonated = np.tile(np.array(background, dtype=bool), (2**m, 1))
    protonated[:, list(active)] = _states(m)
    q = _site_charge(np.array(is_acid, dtype=int), protonated.astype(int))
    arrays = (protonated, (q > 0).astype(float), (q < 0).astype(float), q.sum(axis=1), _states(m).sum(axis=1))
    for array in arrays:
        array.setflags(write=False)
    return _Layout(*arrays)


def _pair_sum_arrays(left: np.ndarray, w: np.ndarray, right: np.ndarray) -> np.ndarray:
    return ((left @ w) * right).sum(axis=1)


@lru_cache(maxsize=MAX_EXACT_SITES + 1)
def _states(m: int) -> np.ndarray:
    """All 2**m protonation patterns of m sites (read-only, shared between molecules)."""
    states = ((np.arange(2**m)[:, None] >> np.arange(m)[None, :]) & 1).astype(bool)
    states.setflags(write=False)
    return states


# Shared set-up


def _split_active(pka: list[float], ph_values: tuple[float, ...]) -> tuple[list[int], list[int], int]:
    """Sites enumerated (nearest the pH window first, at most MAX_EXACT_SITES) and sites fixed."""
    lo, hi = min(ph_values), max(ph_values)
    outside = [max(lo - p, p - hi, 0.0) for p in pka]
    if len(pka) <= MAX_EXACT_SITES and all(x <= WINDOW_MARGIN for x in outside):
        return list(range(len(pka))), [], 0  # the usual case: every site is enumerated
    order = sorted(range(len(pka)), key=outside.__getitem__)
    near = [i for i in order if outside[i] <= WINDOW_MARGIN]
    keep = near[:MAX_EXACT_SITES]
    fixed = sorted(set(range(len(pka))) - set(keep))
    return sorted(keep), fixed, len(near) - len(keep)


def _interaction_matrices(
    distances: Sequence[Sequence[int]] | np.ndarray,
    second_paths: Sequence[Sequence[int]] | np.ndarray,
    table: InteractionTable,
) -> tuple[Matrix, Matrix]:
    n = len(distances)
    like = [[0.0] * n for _ in range(n)]
    opp = [[0.0] * n for _ in range(n)]
    for i in range(n):
        row, second_row = distances[i], second_paths[i]
        for j in range(n):
            if i != j:
                like[i][j], opp[i][j] = table.pair(int(row[j]), int(second_row[j]))
    return tuple(map(tuple, like)), tuple(map(tuple, opp))
