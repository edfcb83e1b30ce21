"""Held-out p-values, the calibration check, rows with gaps and the EM fit."""

import pickle

import numpy as np
import pytest
from scipy import stats

import mvdist
from conftest import rng


def test_held_out_p_values_follow_the_conformal_formula(wine):
    x, _ = wine
    m = mvdist.DistanceModel.fit(x, hold_out=0.3, hold_out_seed=2)
    assert m.calibration_size == round(0.3 * len(x))
    assert m.sample_size == len(x) - m.calibration_size
    cal = m.calibration_squared_distances
    assert np.all(np.diff(cal) >= 0)
    s = m.score(x, p_values="held_out")
    assert s.basis == "held_out" and s.reference is None
    # The formula, written here with numpy: (1 + #{c >= d2}) / (m + 1).
    counts = (cal[None, :] >= s.squared_distances[:, None]).sum(axis=1)
    want = (1 + counts) / (len(cal) + 1)
    assert np.array_equal(s.p_values, want)
    # Calibration-conditional: min(1, count/m + sqrt(ln(1/delta)/(2m))).
    c = m.score(x, p_values="held_out_conditional", delta=0.1)
    want = np.minimum(1, counts / len(cal) + np.sqrt(np.log(10) / (2 * len(cal))))
    assert np.allclose(c.p_values, want, rtol=1e-15, atol=0)
    # The law is still there, and pickling keeps the calibration rows.
    assert m.score(x).basis == "law"
    back = pickle.loads(pickle.dumps(m))
    assert np.array_equal(back.calibration_squared_distances, cal)


def test_held_out_p_values_are_valid_under_heavy_tails():
    """Super-uniform in a size simulation where the F reference fails
    (Student t with 3 degrees of freedom; 3000 repetitions)."""
    g = rng(8)
    reps, alpha = 3000, 0.05
    held, law = 0, 0
    for rep in range(reps):
        rows = g.standard_t(3, size=(201, 3))
        m = mvdist.DistanceModel.fit(rows[:200], hold_out=0.5, hold_out_seed=rep)
        held += m.score(rows[200:], p_values="held_out").p_values[0] <= alpha
        law += m.score(rows[200:]).p_values[0] <= alpha
    se = np.sqrt(alpha * (1 - alpha) / reps)
    assert held / reps <= alpha + 3 * se, held / reps
    assert law / reps > alpha + 3 * se, law / reps


def test_held_out_refusals_say_what_to_do(iris):
    x, _ = iris
    plain = mvdist.DistanceModel.fit(x)
    assert plain.calibration_size is None
    with pytest.raises(mvdist.MvdistError, match="hold_out|fit_holding_out"):
        plain.score(x, p_values="held_out")
    m = mvdist.DistanceModel.fit(x, hold_out=0.2)
    with pytest.raises(mvdist.MvdistError, match="hold out at least"):
        m.held_out_cutoff(0.001)
    assert m.held_out_cutoff(0.05) > 0
    with pytest.raises(mvdist.MvdistError, match="delta"):
        m.score(x, p_values="held_out_conditional", delta=0.9)
    with pytest.raises(mvdist.MvdistError, match="new rows"):
        m.score(x, origin="in_sample", p_values="held_out")
    with pytest.raises(mvdist.MvdistError, match="p_values"):
        m.score(x, p_values="empirical")
    with pytest.raises(mvdist.MvdistError, match="fraction"):
        mvdist.DistanceModel.fit(x, hold_out=1.5)


def test_calibration_check_and_chart():
    g = rng(3)
    m = mvdist.DistanceModel.fit(g.standard_t(3, size=(6000, 4)), hold_out=0.5)
    check = m.calibration_check()
    assert check["held_out_rows"] == 3000
    one = check["levels"][1]
    assert one["alpha"] == 0.01 and one["verdict"] == "too_many_flags"
    # The interval is the exact binomial one (scipy's Clopper-Pearson).
    ci = stats.binomtest(one["exceedances"], 3000).proportion_ci(0.95, "exact")
    assert np.allclose(one["interval"], [ci.low, ci.high], rtol=1e-8)
    assert m.calibration_chart().startswith("<svg")
    report = mvdist.normality_report(g.normal(size=(800, 3)), hold_out=0.5)
    cal = report.to_dict()["calibration"]
    assert cal["held_out_rows"] == 400


def test_observed_coordinates_match_numpy_on_the_sub_matrix(iris):
    x, _ = iris
    m = mvdist.DistanceModel.fit(x)
    rows = x[[3, 50, 120]].copy()
    rows[0, 1] = np.nan
    rows[1, [0, 3]] = np.nan
    s = m.score_observed(rows)
    mu, cov = x.mean(axis=0), np.cov(x, rowvar=False)
    n = len(x)
    for i, r in enumerate(rows):
        o = ~np.isnan(r)
        c = r[o] - mu[o]
        d2 = c @ np.linalg.solve(cov[np.ix_(o, o)], c)
        k = o.sum()
        p = stats.f.sf(n * (n - k) * d2 / (k * (n + 1) * (n - 1)), k, n - k)
        assert s["observed"][i] == k
        assert np.isclose(s["squared_distances"][i], d2, rtol=1e-12)
        assert np.isclose(s["p_values"][i], p, rtol=1e-10)
    assert s["patterns"] == 3
    with pytest.raises(mvdist.MvdistError, match="no observed value"):
        m.score_observed([[np.nan] * 4])


def test_em_without_gaps_is_the_maximum_likelihood_fit(wine):
    x, _ = wine
    m = mvdist.DistanceModel.fit(x, "em")
    assert m.fit_method["kind"] == "expectation_maximization"
    assert m.fit_method["converged"]
    assert np.allclose(m.location, x.mean(axis=0), rtol=1e-13)
    assert np.allclose(m.covariance, np.cov(x, rowvar=False, ddof=0), rtol=1e-10)
    # With gaps: still a model, and the gaps are counted.
    y = x.copy()
    y[::7, 2] = np.nan
    g = mvdist.DistanceModel.fit(y, "em")
    assert g.fit_method["missing_cells"] == len(y[::7])
    with pytest.raises(mvdist.MvdistError, match="hold_out needs complete rows"):
        mvdist.DistanceModel.fit(y, "em", hold_out=0.3)
    with pytest.raises(mvdist.MvdistError, match="row 0"):
        mvdist.DistanceModel.fit(y)
