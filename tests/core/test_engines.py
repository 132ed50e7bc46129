"""The compiled screen and the statsmodels screen choose the same models.

The statsmodels path is the fallback when numba is missing (and for gappy differenced series);
both must lead to the same AICc-best model, whose numbers come from statsmodels either way.
Data: the Nile flow (open data shipped by statsmodels) and the invented sample fishery.
"""

from __future__ import annotations

import pytest

import forecasting_core as fc


def test_both_engines_pick_the_same_model_for_the_nile(nile):
    fast = fc.compare_models(nile, hindcast=False, engine="auto")
    plain = fc.compare_models(nile, hindcast=False, engine="statsmodels")
    assert fast.best.label == plain.best.label
    assert fast.best.aicc == pytest.approx(plain.best.aicc, abs=0.05)
    assert fast.settings["engine"] == "auto"


@pytest.mark.parametrize("name", ["hake_t", "plaice_t", "whiting_t"])
def test_both_engines_agree_on_the_sample_landings(sample_dir, name):
    y = fc.read_table(sample_dir / "vellmouth_landings.csv").series[name]
    fast = fc.compare_models(y, hindcast=False, max_p=3, max_q=3)
    plain = fc.compare_models(y, hindcast=False, max_p=3, max_q=3, engine="statsmodels")
    # The chosen model is within 0.05 AICc of the statsmodels screen's choice (common practice:
    # AICc differences below about 2 do not separate models; we ask for far less).
    assert fast.best.aicc <= plain.best.aicc + 0.05


def test_unknown_engine_is_named(nile):
    with pytest.raises(fc.InputError, match="engine must be one of auto, statsmodels. Got 'fast' instead."):
        fc.compare_models(nile, engine="fast")
