"""Wilson score interval against a reference library and a published example."""
from __future__ import annotations

import pytest
from statsmodels.stats.proportion import proportion_confint

from sitegen.analysis.stats import wilson


@pytest.mark.parametrize("n", [1, 2, 3, 5, 10, 17, 50, 100, 263, 1000, 12345])
def test_wilson_equals_statsmodels_over_a_grid(n):
    # Reference library: statsmodels proportion_confint(method="wilson"), 95%.
    for successes in sorted({0, 1, n // 3, n // 2, n - 1, n}):
        low, high = wilson(successes, n)
        ref_low, ref_high = proportion_confint(successes, n, alpha=0.05, method="wilson")
        assert low == pytest.approx(ref_low, abs=1e-12)
        assert high == pytest.approx(ref_high, abs=1e-12)


def test_wilson_other_confidence_level_equals_statsmodels():
    # Reference library: statsmodels, 90% interval (z = 1.6448536269514722).
    low, high = wilson(30, 70, z=1.6448536269514722)
    ref = proportion_confint(30, 70, alpha=0.10, method="wilson")
    assert (low, high) == pytest.approx(ref, abs=1e-12)


def test_wilson_newcombe_worked_example():
    # Textbook worked example: Newcombe (1998), Statistics in Medicine 17:857-872,
    # 81 of 263, 95% Wilson interval 0.2553 to 0.3662 (figures quoted from memory,
    # so also confirmed against statsmodels).
    low, high = wilson(81, 263)
    assert round(low, 4) == 0.2553
    assert round(high, 4) == 0.3662
    assert (low, high) == pytest.approx(proportion_confint(81, 263, method="wilson"), abs=1e-12)


def test_wilson_ends_are_exact():
    # At 0 of n the lower bound is 0, at n of n the upper bound is 1 (algebra of
    # the score interval); statsmodels gives the same.
    assert wilson(0, 10)[0] == 0.0
    assert wilson(10, 10)[1] == 1.0
    assert proportion_confint(10, 10, method="wilson")[1] == pytest.approx(1.0)


def test_wilson_no_trials_is_whole_range():
    # Documented choice: with no games nothing is known.
    assert wilson(0, 0) == (0.0, 1.0)


@pytest.mark.parametrize("successes,n", [(-1, 5), (6, 5), (0, -1)])
def test_wilson_rejects_impossible_counts(successes, n):
    with pytest.raises(ValueError, match="successes must be in 0..n"):
        wilson(successes, n)
