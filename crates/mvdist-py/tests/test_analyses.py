"""Normality report, classification, Hotelling tests, Box's M and control
charts, against numpy, scipy and scikit-learn."""

import numpy as np
import pytest
from scipy import stats
from sklearn.discriminant_analysis import (
    LinearDiscriminantAnalysis,
    QuadraticDiscriminantAnalysis,
)

import mvdist

from conftest import rng


def mardia(x):
    """Mardia (1970) b1,p and b2,p with the maximum-likelihood covariance."""
    n = len(x)
    c = x - x.mean(axis=0)
    s = c.T @ c / n
    g = c @ np.linalg.solve(s, c.T)
    return (g**3).sum() / n**2, (np.diag(g) ** 2).mean()


def test_mardia_statistics_match_numpy(iris):
    x, _ = iris
    n, p = x.shape
    b1, b2 = mardia(x)
    r = mvdist.normality_report(x)
    # Skewness statistic n b1 / 6 ~ chi-square with p(p+1)(p+2)/6 dof.
    assert r.statistic("mardia_skewness") == pytest.approx(n * b1 / 6, rel=1e-9)
    dof = p * (p + 1) * (p + 2) / 6
    assert r.p_value("mardia_skewness") == pytest.approx(stats.chi2.sf(n * b1 / 6, dof), rel=1e-8)
    tests = {t["test"]: t for t in r.tests}
    assert set(tests) >= {"mardia_kurtosis", "henze_zirkler", "royston_h", "doornik_hansen"}
    assert r.rows == n and r.columns == p
    assert "evidence, not a verdict" in r.caution
    # Invariance: Mardia's and Henze-Zirkler's statistics do not change
    # under x -> A x + b; Doornik-Hansen's and Royston's (built on the
    # correlation matrix and the marginals) under per-variable scaling.
    a = rng(5).normal(size=(p, p)) + 3 * np.eye(p)
    r2 = mvdist.normality_report(x @ a.T + 1.5)
    for name in ("mardia_skewness", "mardia_kurtosis", "henze_zirkler"):
        assert r2.statistic(name) == pytest.approx(r.statistic(name), rel=1e-7)
    r3 = mvdist.normality_report(x * [2.0, 3.0, 0.5, 7.0] + 1.0)
    for name in ("doornik_hansen", "royston_h"):
        assert r3.statistic(name) == pytest.approx(r.statistic(name), rel=1e-7)


def test_normality_report_per_variable_shapiro_wilk_matches_scipy(iris):
    x, _ = iris
    r = mvdist.normality_report(x, variables=["a", "b", "c", "d"])
    for j, v in enumerate(r.per_variable):
        w, pw = stats.shapiro(x[:, j])
        assert v["name"] == "abcd"[j]
        assert v["shapiro_wilk_w"] == pytest.approx(w, rel=1e-4)
        assert v["shapiro_wilk_p_value"] == pytest.approx(pw, rel=1e-2, abs=1e-6)
        assert v["skewness"] == pytest.approx(stats.skew(x[:, j]), rel=1e-9)
    d = r.to_dict()
    assert d["rows"] == 150 and len(d["tests"]) == 6
    assert "Henze-Zirkler" in repr(r)
    with pytest.raises(mvdist.MvdistError):
        r.p_value("mystery")


def test_linear_rule_matches_sklearn_lda(iris):
    x, y = iris
    c = mvdist.Classifier.fit(x, y, rule="linear", divisor="maximum_likelihood")
    sk = LinearDiscriminantAnalysis(solver="lsqr").fit(x, y)
    pred = c.predict(x)
    np.testing.assert_array_equal(np.array(pred.labels), sk.predict(x))
    np.testing.assert_allclose(pred.posteriors, sk.predict_proba(x), atol=1e-9)
    np.testing.assert_allclose(c.centroids, sk.means_, rtol=1e-12)
    assert c.classes == [0, 1, 2]
    assert c.counts == [50, 50, 50]


def test_quadratic_rule_matches_sklearn_qda(wine):
    x, y = wine
    x = x[:, :5]
    # scikit-learn 1.9.1's QDA divides each class's scatter by n_g.
    c = mvdist.Classifier.fit(x, y, rule="quadratic", divisor="maximum_likelihood")
    sk = QuadraticDiscriminantAnalysis(store_covariance=True).fit(x, y)
    pred = c.predict(x)
    np.testing.assert_array_equal(np.array(pred.labels), sk.predict(x))
    np.testing.assert_allclose(pred.posteriors, sk.predict_proba(x), atol=1e-8)


def test_classifier_labels_priors_and_no_group(iris):
    x, y = iris
    labels = np.array(["setosa", "versicolor", "virginica"])[y]
    c = mvdist.Classifier.fit(x, labels, priors={"setosa": 0.2, "versicolor": 0.4, "virginica": 0.4})
    assert c.priors == pytest.approx([0.2, 0.4, 0.4])
    pred = c.predict(np.vstack([x[:2], [[30, 30, 30, 30]]]), no_group_below=0.001)
    assert pred.labels[:2] == ["setosa", "setosa"]
    assert pred.no_group.tolist() == [False, False, True]
    assert pred.typicality.shape == (3,)
    loo = mvdist.leave_one_out(x, labels)
    assert 0 < loo["error_rate"] < 0.05
    assert loo["confusion"].sum() == 150
    with pytest.raises(mvdist.MvdistError) as err:
        mvdist.Classifier.fit(x, labels[:-1])
    assert err.value.kind == "shape_mismatch"
    with pytest.raises(mvdist.MvdistError) as err:
        mvdist.Classifier.fit(x, ["only"] * 150)
    assert err.value.kind == "too_few_groups"
    with pytest.raises(mvdist.MvdistError):
        mvdist.Classifier.fit(x, labels, priors={"daisy": 1.0})


def test_hotelling_one_sample_matches_numpy(iris):
    x, y = iris
    x = x[y == 0]
    n, p = x.shape
    mu = np.array([5.0, 3.4, 1.5, 0.25])
    t = mvdist.mean_tests.one_sample(x, mu)
    d = x.mean(axis=0) - mu
    t2 = n * d @ np.linalg.solve(np.cov(x, rowvar=False), d)
    assert t.t_squared == pytest.approx(t2, rel=1e-10)
    f = (n - p) / (p * (n - 1)) * t2
    assert t.f_statistic == pytest.approx(f, rel=1e-10)
    assert (t.numerator_dof, t.denominator_dof) == (p, n - p)
    assert t.p_value == pytest.approx(stats.f.sf(f, p, n - p), rel=1e-8)
    assert t.rejects(0.05) == (t.p_value <= 0.05)
    iv = t.intervals(0.05)
    assert len(iv) == p and iv[0]["simultaneous"]["lower"] < iv[0]["bonferroni"]["lower"]
    assert t.kind == "one_sample"


def test_hotelling_two_sample_and_paired_match_numpy(iris):
    x, y = iris
    a, b = x[y == 1], x[y == 2]
    n1, n2, p = len(a), len(b), x.shape[1]
    t = mvdist.mean_tests.two_sample(a, b)
    s = ((n1 - 1) * np.cov(a, rowvar=False) + (n2 - 1) * np.cov(b, rowvar=False)) / (n1 + n2 - 2)
    d = a.mean(0) - b.mean(0)
    t2 = n1 * n2 / (n1 + n2) * d @ np.linalg.solve(s, d)
    assert t.t_squared == pytest.approx(t2, rel=1e-10)
    assert t.denominator_dof == n1 + n2 - p - 1
    u = mvdist.mean_tests.two_sample(a, b, equal_scatter=False)
    assert u.kind == "two_sample_unequal_scatter" and 0 <= u.p_value <= 1
    pr = mvdist.mean_tests.paired(a, b)
    one = mvdist.mean_tests.one_sample(a - b, np.zeros(p))
    assert pr.t_squared == pytest.approx(one.t_squared, rel=1e-12)


def test_box_m_matches_numpy(iris):
    x, y = iris
    groups = [x[y == g] for g in range(3)]
    r = mvdist.mean_tests.scatter_equality(groups)
    n = np.array([len(g) for g in groups])
    covs = [np.cov(g, rowvar=False) for g in groups]
    pooled = sum((ni - 1) * c for ni, c in zip(n, covs)) / (n.sum() - 3)
    m = (n.sum() - 3) * np.linalg.slogdet(pooled)[1] - sum(
        (ni - 1) * np.linalg.slogdet(c)[1] for ni, c in zip(n, covs)
    )
    assert r.statistic == pytest.approx(m, rel=1e-9)
    assert r.chi_square()["reference"]["degrees_of_freedom"] == [20.0]
    assert r.p_value < 1e-10
    assert r.group_sizes == [50, 50, 50]


def test_control_chart_limits_match_the_published_laws():
    g = rng(21)
    x = g.normal(size=(80, 3))
    n, p = x.shape
    alpha = 0.005
    chart = mvdist.ControlChart.individuals(x, alpha=alpha)
    # Phase I limit (Tracy, Young and Mason 1992): (n-1)²/n Beta quantile.
    ucl1 = (n - 1) ** 2 / n * stats.beta.isf(alpha, p / 2, (n - p - 1) / 2)
    assert chart.upper_limit("in_sample") == pytest.approx(ucl1, rel=1e-10)
    # Phase II limit: p(n+1)(n-1)/(n(n-p)) F quantile.
    ucl2 = p * (n + 1) * (n - 1) / (n * (n - p)) * stats.f.isf(alpha, p, n - p)
    assert chart.upper_limit("new") == pytest.approx(ucl2, rel=1e-10)
    pts = chart.monitor(np.vstack([x[:3], [[4, -4, 4]]]))
    assert pts.signal.tolist()[-1]
    assert len(pts) == 4
    np.testing.assert_allclose(pts.upper_limit, ucl2, rtol=1e-12)
    records = pts.to_list()
    assert records[-1]["diagnosis"] is not None
    d = chart.diagnose([4, -4, 4])
    assert isinstance(d, dict)
    assert chart.phase_one_points.t_squared.shape == (n,)
    sub = mvdist.ControlChart.subgroups(x, 4)
    assert sub.design == "subgroups" and sub.in_estimate == 20
    with pytest.raises(mvdist.MvdistError):
        mvdist.ControlChart.subgroups(x[:-1], 4)
    with pytest.raises(mvdist.MvdistError):
        mvdist.ControlChart.individuals(x, alpha=0.01, average_run_length=100)
