"""The microstate model: both evaluations (Python numbers, numpy arrays) give the same bits.

Molecules with up to SMALL_SITES sites are weighed in plain Python and larger ones
with numpy; results must not depend on which path a molecule takes. The equality
rests on two facts checked here: ``numpy_order_sum`` adds in numpy's order, and math's
exp / pow / log10 round as numpy's do on this platform.
"""

from __future__ import annotations

import math
import random

import numpy as np
import pytest

from annotate.species import microstates as ms
from annotate.species.interactions import InteractionTable
from annotate.species.microstates import MAX_EXACT_SITES, SMALL_SITES, build_model

NO_INTERACTION = InteractionTable(like=(0.0,) * 13, opposite=(0.0,) * 13)
PH = (0.0, 2.0, 4.76, 7.4, 10.0, 14.0)


def _random_inputs(rng: random.Random, n: int) -> dict:
    """Site kinds, pKa values (some tied, some far outside the window) and interactions."""
    table = InteractionTable(
        like=(0.0, *(rng.choice([0.0, rng.uniform(0, 3), 1.25]) for _ in range(12))),
        opposite=(0.0, *(rng.choice([0.0, rng.uniform(0, 3), 0.5]) for _ in range(12))),
    )
    kinds = [rng.choice(["acid", "base"]) for _ in range(n)]
    pkas = [rng.choice([rng.uniform(-4.0, 18.0), 4.76, 9.5]) for _ in range(n)]
    distances = [[0] * n for _ in range(n)]
    second = [[0] * n for _ in range(n)]
    for i in range(n):
        for j in range(i + 1, n):
            distances[i][j] = distances[j][i] = rng.randint(0, 14)
            second[i][j] = second[j][i] = rng.choice([0, 0, rng.randint(1, 8)])
    ph_values = tuple(sorted(rng.sample(PH, rng.randint(1, 3))))
    return dict(kinds=kinds, pkas=pkas, distances=distances, second=second, ph_values=ph_values, table=table,
                base_charge=rng.randint(-1, 1))


def _both_paths(inputs: dict) -> tuple[ms.MicrostateModel, ms.MicrostateModel]:
    """The same model evaluated with Python numbers and with numpy arrays."""
    return tuple(
        build_model(inputs["kinds"], inputs["pkas"], inputs["distances"], inputs["second"],
                    base_charge=inputs["base_charge"], ph_values=inputs["ph_values"], table=inputs["table"],
                    evaluation=path)
        for path in ("python", "numpy")
    )


@pytest.mark.parametrize("seed", range(2))
def test_python_and_numpy_paths_agree(seed: int) -> None:
    rng = random.Random(seed)
    for _ in range(250):
        n = rng.randint(0, SMALL_SITES)
        inputs = _random_inputs(rng, n)
        python_model, numpy_model = _both_paths(inputs)
        small, arrays = python_model.states, numpy_model.states
        if n:  # a molecule without sites has one state whichever path is asked for
            assert type(small) is ms.StateList and type(arrays) is ms.StateArrays
        assert list(small.log_base) == np.asarray(arrays.log_base).tolist(), inputs
        assert np.array_equal(small.protonated_array(), arrays.protonated_array())
        assert list(small.charges) == np.asarray(arrays.charges).tolist()
        assert python_model.macro_pka == numpy_model.macro_pka
        for ph in PH:
            # numpy's exp may be a SIMD routine that differs from libm's math.exp in the
            # last bit (seen on an AVX-512 machine), so fractions agree to an ulp or two
            assert small.fractions(ph) == pytest.approx(np.asarray(arrays.fractions(ph)).tolist(), rel=1e-14, abs=0), (inputs, ph)
            python, numpy = small.populations(ph, 64), arrays.populations(ph, 64)
            assert [k for k, _ in python.ranked] == [k for k, _ in numpy.ranked], (inputs, ph)
            assert [f for _, f in python.ranked] == pytest.approx([f for _, f in numpy.ranked], rel=1e-14, abs=0)
            assert python.charge_mean == pytest.approx(numpy.charge_mean, rel=1e-14, abs=1e-15)


def test_python_path_serves_small_molecules_only() -> None:
    rng = random.Random(7)
    for n, expected in ((0, ms.StateList), (SMALL_SITES, ms.StateList), (SMALL_SITES + 1, ms.StateArrays)):
        inputs = _random_inputs(rng, n)
        model = build_model(inputs["kinds"], inputs["pkas"], inputs["distances"], inputs["second"],
                            base_charge=0, ph_values=inputs["ph_values"], table=inputs["table"])
        assert type(model.states) is expected


@pytest.mark.parametrize("length", [*range(0, 20), 31, 64, 127, 128, 129, 200, 256, 300, 1024, 4096])
def test_numpy_order_sum(length: int) -> None:
    rng = np.random.default_rng(length)
    for _ in range(50):
        values = rng.standard_normal(length) * 10.0 ** rng.uniform(-8, 8, length)
        assert ms.numpy_order_sum(values.tolist()) == values.sum()


def test_math_functions_agree_with_numpy() -> None:
    """The Python path uses math.exp, ** and math.log10 where the array path uses numpy.

    They agree to an ulp or two, not always bit for bit: on a machine with AVX-512,
    numpy's exp is a SIMD routine whose last bit can differ from libm's. Reported
    fractions are rounded to six digits, far above that.
    """
    rng = np.random.default_rng(0)
    exponents = rng.uniform(-60.0, 0.0, 20_000)
    assert [math.exp(x * ms.LN10) for x in exponents.tolist()] == pytest.approx(np.exp(exponents * ms.LN10).tolist(), rel=1e-15, abs=0)
    assert [10.0**x for x in exponents.tolist()] == pytest.approx(np.power(10.0, exponents).tolist(), rel=1e-15, abs=0)
    sums = rng.uniform(1.0, 4096.0, 20_000)
    assert [math.log10(x) for x in sums.tolist()] == pytest.approx(np.log10(sums).tolist(), rel=1e-15, abs=0)
    assert ms.LN10 == np.log(10.0)


def test_lists_and_arrays_of_distances_give_the_same_model() -> None:
    rng = random.Random(3)
    for n in (2, 3, 5):
        inputs = _random_inputs(rng, n)
        common = dict(base_charge=0, ph_values=inputs["ph_values"], table=inputs["table"])
        a = build_model(inputs["kinds"], inputs["pkas"], inputs["distances"], inputs["second"], **common)
        b = build_model(inputs["kinds"], inputs["pkas"], np.array(inputs["distances"]), np.array(inputs["second"]), **common)
        assert a.macro_pka == b.macro_pka and a.w_like == b.w_like and a.w_opp == b.w_opp
        assert a.fractions(7.4).tolist() == b.fractions(7.4).tolist()


def test_populations_rank_ties_in_state_order() -> None:
    """Two equivalent acids at pH = pKa: the two monoanions tie and keep their state order."""
    model = build_model(["acid", "acid"], [5.0, 5.0], [[0, 20], [20, 0]], [[0, 0], [0, 0]],
                        base_charge=0, ph_values=(5.0,), table=NO_INTERACTION)
    populations = model.populations(5.0, 64)
    states = [k for k, _ in populations.ranked]
    fractions = dict(populations.ranked)
    assert fractions[1] == fractions[2]
    assert states.index(1) < states.index(2)
    assert sum(fractions.values()) == pytest.approx(1.0, abs=1e-12)
    assert populations.charge_mean == pytest.approx(-1.0, abs=1e-12)  # 1/4 neutral, 1/2 -1, 1/4 -2
    assert [k for k, _ in model.populations(5.0, 2).ranked] == states[:2]


def test_no_sites_is_one_neutral_state() -> None:
    model = build_model([], [], [], [], base_charge=1, ph_values=(7.4,), table=NO_INTERACTION)
    assert model.macro_pka == ()
    assert model.populations(7.4, 64).ranked == [(0, 1.0)]
    assert model.populations(7.4, 64).charge_mean == 1.0
    assert model.pattern(0) == () and model.charge(0) == 1


def test_sites_beyond_the_exact_limit_are_fixed() -> None:
    """Two more sites than the limit, all inside the window: the two farthest from it are fixed."""
    n = MAX_EXACT_SITES + 2
    pkas = [7.0 + 0.1 * i for i in range(n)]
    zeros = [[0] * n for _ in range(n)]
    model = build_model(["acid"] * n, pkas, zeros, zeros, base_charge=0, ph_values=(7.0,), table=NO_INTERACTION)
    assert model.fixed_sites == (n - 2, n - 1)
    assert model.truncated == 2
    assert len(model.fractions(7.0)) == 2**MAX_EXACT_SITES
    assert round(pkas[-1], 3) in model.macro_pka
    # fixed above the window's middle, so protonated in every state
    assert model.protonated[:, -2:].all()
