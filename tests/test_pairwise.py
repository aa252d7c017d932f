"""Tests of ttsp.pairwise: chained pairwise shifts (the plain route) and the neighbour mismatch.

Ground truth: exact campaigns of a Gaussian Prony spectrum under WLF (the generator of
tests/test_shifting.py), whose shifts are known.
"""

from __future__ import annotations

import numpy as np
import pytest
from _campaigns import (
    shift_test_campaign as campaign,  # the exact-campaign generator of the shift tests
)

from ttsp.pairwise import chained_pairwise_log10_aT, collapse_functions, neighbour_mismatch


@pytest.mark.parametrize("domain", ["frequency", "time"])
def test_noise_free_shifts_are_recovered(domain):
    """Without noise the only error is the linear interpolation of log E between points
    ten per three decades apart; measured below 0.01 decade per step (domain-independent)."""
    camp, true = campaign(noise=0.0, domain=domain)
    s = chained_pairwise_log10_aT(camp, 320.0)
    assert s[np.argmin(np.abs(camp.temperatures_K - 320.0))] == pytest.approx(0.0, abs=1e-12)
    np.testing.assert_allclose(s, true, atol=0.03)


def test_mismatch_is_smallest_at_the_pairwise_shifts_and_grows_when_one_moves():
    camp, true = campaign(noise=0.02, seed=3)
    s = chained_pairwise_log10_aT(camp, 320.0)
    best = neighbour_mismatch(camp, s)
    assert 0.01 < best < 0.05          # 2 % noise on both isotherms of a pair: ~0.012 decade
    moved = s.copy()
    moved[4] += 0.2
    assert neighbour_mismatch(camp, moved) > 2 * best
    # the exact shifts collapse nearly as well as the optimum of the mismatch itself
    assert neighbour_mismatch(camp, true) / best < 1.15


def test_reference_between_isotherms_is_interpolated():
    camp, true = campaign(noise=0.0)
    s = chained_pairwise_log10_aT(camp, 322.5)        # halfway between 320 and 325 K
    k = np.searchsorted(camp.temperatures_K, 322.5)
    assert 0.5 * (s[k - 1] + s[k]) == pytest.approx(0.0, abs=1e-12)


def test_collapse_functions():
    camp, _ = campaign()
    assert collapse_functions(camp) == ("storage_modulus_Pa", "loss_modulus_Pa")
    camp, _ = campaign(domain="time")
    assert collapse_functions(camp) == ("relaxation_modulus_Pa",)
