"""Microstate partition function: populations, macroscopic pKa and mean charge.

Each site is either in its reference form (acid protonated, base neutral) or
ionized. A microstate's log10 weight at a given pH is

    sum over protonated sites (pKa_i - pH)  -  sum over pairs q_i q_j W(d_ij)

(Henderson-Hasselbalch per site, plus the charge-charge term). Macroscopic pKa
values follow from the sums Z_k over microstates holding k protons:
pKa_k = log10(Z_k / Z_{k-1}). Exact enumeration covers up to ``MAX_EXACT_SITES``
sites; beyond that the sites farthest from the pH window are fixed in the form
they take inside the window and reported with their own microscopic pKa.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from annotate.results import Kind
from annotate.species.interactions import SECOND_RING_PATH_WEIGHT, InteractionTable

#: 2**12 = 4096 microstates: about a millisecond; more grows as 2**n
MAX_EXACT_SITES = 12
#: sites whose pKa lies further than this outside every requested pH are fixed first
WINDOW_MARGIN = 6.0
#: sites closer than this in pKa titrate together rather than one after the other
COMPETING = 0.5


@dataclass(frozen=True, slots=True)
class MicrostateModel:
    """Microstates of one molecule, pH independent; weights are evaluated per pH."""

    protonated: np.ndarray  # (states, sites) bool
    charges: np.ndarray  # (states,) int, net charge of each state
    n_protons: np.ndarray  # (states,) int, protons on the active sites
    log_base: np.ndarray  # (states,) float, log10 weight without the pH term
    macro_pka: tuple[float, ...]
    fixed_sites: tuple[int, ...]
    #: sites fixed although near the pH window, because of MAX_EXACT_SITES
    truncated: int
    w_like: np.ndarray  # (sites, sites) interaction between like charges
    w_opp: np.ndarray  # (sites, sites) interaction between opposite charges

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
                w = self.w_like[i, j] if charged_i == q_j else self.w_opp[i, j]
                shift -= w * q_j
            out.append(float(pka_i + shift))
        return out

    def fractions(self, ph: float) -> np.ndarray:
        logw = self.log_base - self.n_protons * ph
        w = np.exp((logw - logw.max()) * np.log(10.0))
        return w / w.sum()


def build_model(
    kinds: list[Kind],
    pkas: list[float],
    distances: np.ndarray,
    second_paths: np.ndarray,
    *,
    base_charge: int,
    ph_values: tuple[float, ...],
    table: InteractionTable,
) -> MicrostateModel:
    """Enumerate microstates; ``distances``/``second_paths`` are site-to-site bond counts."""
    n = len(pkas)
    pka = np.asarray(pkas, dtype=float)
    is_acid = np.array([k == "acid" for k in kinds], dtype=bool)
    active, fixed, truncated = _split_active(pka, ph_values)
    mid = (min(ph_values) + max(ph_values)) / 2.0
    fixed_protonated = pka > mid  # the form a fixed site takes inside the window
    m = len(active)
    states = _states(m)
    protonated = np.zeros((2**m, n), dtype=bool)
    protonated[:, active] = states
    protonated[:, fixed] = fixed_protonated[fixed]
    q = np.where(is_acid, np.where(protonated, 0, -1), np.where(protonated, 1, 0))
    w_like, w_opp = _interaction_matrices(distances, second_paths, table)
    interaction = _interaction_energy(q, w_like, w_opp)
    log_base = (states * pka[active]).sum(axis=1) - interaction
    n_protons = states.sum(axis=1)
    macro = _macro_pka(log_base, n_protons, m) + tuple(float(pka[i]) for i in fixed)
    return MicrostateModel(
        protonated=protonated,
        charges=q.sum(axis=1) + base_charge,
        n_protons=n_protons,
        log_base=log_base,
        macro_pka=tuple(sorted(round(x, 3) for x in macro)),
        fixed_sites=tuple(int(i) for i in fixed),
        truncated=truncated,
        w_like=w_like,
        w_opp=w_opp,
    )


@lru_cache(maxsize=MAX_EXACT_SITES + 1)
def _states(m: int) -> np.ndarray:
    """All 2**m protonation patterns of m sites (read-only, shared between molecules)."""
    states = ((np.arange(2**m)[:, None] >> np.arange(m)[None, :]) & 1).astype(bool)
    states.setflags(write=False)
    return states


def _split_active(pka: np.ndarray, ph_values: tuple[float, ...]) -> tuple[np.ndarray, np.ndarray, int]:
    lo, hi = min(ph_values), max(ph_values)
    outside = np.maximum(lo - pka, pka - hi).clip(min=0.0)
    order = np.argsort(outside, kind="stable")
    near = [i for i in order if outside[i] <= WINDOW_MARGIN]
    keep = near[:MAX_EXACT_SITES]
    active = np.array(sorted(keep), dtype=int)
    fixed = np.array(sorted(set(range(len(pka))) - set(keep)), dtype=int)
    return active, fixed, len(near) - len(keep)


def _interaction_energy(q: np.ndarray, w_like: np.ndarray, w_opp: np.ndarray) -> np.ndarray:
    """0.5 * sum_ij q_i q_j W_ij per state, W by sign of q_i q_j.

    Written as products of (states, sites) matrices: the direct (states, sites, sites)
    form took gigabytes and seconds for a polymer with 150 sites.
    """
    pos = (q > 0).astype(float)
    neg = (q < 0).astype(float)
    like = ((pos @ w_like) * pos).sum(axis=1) + ((neg @ w_like) * neg).sum(axis=1)
    opposite = ((pos @ w_opp) * neg).sum(axis=1) + ((neg @ w_opp) * pos).sum(axis=1)
    return 0.5 * (like - opposite)


def _interaction_matrices(
    distances: np.ndarray, second_paths: np.ndarray, table: InteractionTable
) -> tuple[np.ndarray, np.ndarray]:
    n = distances.shape[0]
    like = np.zeros((n, n))
    opp = np.zeros((n, n))
    for i in range(n):
        for j in range(n):
            if i == j:
                continue
            d, d2 = int(distances[i, j]), int(second_paths[i, j])
            like[i, j] = table.w(d, like=True) + SECOND_RING_PATH_WEIGHT * table.w(d2, like=True)
            opp[i, j] = table.w(d, like=False) + SECOND_RING_PATH_WEIGHT * table.w(d2, like=False)
    return like, opp


def _macro_pka(log_base: np.ndarray, n_protons: np.ndarray, m: int) -> tuple[float, ...]:
    log_z = []
    for k in range(m + 1):
        sel = log_base[n_protons == k]
        top = sel.max()
        log_z.append(top + np.log10(np.power(10.0, sel - top).sum()))
    return tuple(float(log_z[k] - log_z[k - 1]) for k in range(1, m + 1))
