"""DistanceModel: fits, distances, p-values and cutoffs checked against
numpy, scipy and scikit-learn on datasets scikit-learn ships, with
invariances and a size simulation that do not share our reading of the
formulas."""

import numpy as np
import pytest
from scipy import stats
from scipy.spatial.distance import mahalanobis
from sklearn.covariance import OAS, EmpiricalCovariance, LedoitWolf, MinCovDet

import mvdist

from conftest import rng


def test_classical_matches_scipy_mahalanobis(iris):
    x, _ = iris
    m = mvdist.DistanceModel.fit(x)
    # numpy: unbiased covariance (divisor n - 1), the default.
    np.testing.assert_allclose(m.location, x.mean(axis=0), rtol=1e-14)
    np.testing.assert_allclose(m.covariance, np.cov(x, rowvar=False), rtol=1e-12)
    vi = np.linalg.inv(np.cov(x, rowvar=False))
    # scipy.spatial.distance.mahalanobis gives the distance, not its square.
    expected = np.array([mahalanobis(r, x.mean(axis=0), vi) ** 2 for r in x])
    np.testing.assert_allclose(m.squared_distances(x), expected, rtol=1e-10)


def test_maximum_likelihood_divisor_matches_sklearn(wine):
    x, _ = wine
    m = mvdist.DistanceModel.fit(x, divisor="maximum_likelihood")
    sk = EmpiricalCovariance().fit(x)
    np.testing.assert_allclose(m.covariance, sk.covariance_, rtol=1e-10)
    np.testing.assert_allclose(m.squared_distances(x), sk.mahalanobis(x), rtol=1e-8)


def test_ledoit_wolf_matches_sklearn(wine):
    x, _ = wine
    m = mvdist.DistanceModel.fit(x, "ledoit_wolf")
    sk = LedoitWolf().fit(x)
    np.testing.assert_allclose(m.fit_method["intensity"], sk.shrinkage_, rtol=1e-10)
    np.testing.assert_allclose(m.covariance, sk.covariance_, rtol=1e-9)
    np.testing.assert_allclose(m.squared_distances(x), sk.mahalanobis(x), rtol=1e-8)


def test_oas_sklearn_variant_matches_sklearn(cancer):
    x, _ = cancer
    m = mvdist.DistanceModel.fit(x, "oas", oas_formula="without_two_over_p")
    sk = OAS().fit(x)
    np.testing.assert_allclose(m.fit_method["intensity"], sk.shrinkage_, rtol=1e-10)
    np.testing.assert_allclose(m.covariance, sk.covariance_, rtol=1e-9)


def test_oas_published_formula_differs_and_converges():
    # Chen, Wiesel, Eldar and Hero (2010), eq. 23, keeps 2/p terms that the
    # scikit-learn variant drops; the two agree as p grows.
    gaps = []
    for p in (3, 40):
        # Correlated invented rows, so that neither intensity is clipped at 1.
        z = rng(p).normal(size=(60, p))
        x = z + 3 * z[:, :1]
        a = mvdist.DistanceModel.fit(x, "oas").fit_method["intensity"]
        b = mvdist.DistanceModel.fit(x, "oas", oas_formula="without_two_over_p").fit_method[
            "intensity"
        ]
        gaps.append(abs(a - b))
    assert gaps[0] > 0
    assert gaps[1] < gaps[0]


def test_mcd_finds_the_same_clean_core_as_sklearn():
    # Invented contaminated sample: 180 normal rows and 20 far shifted ones.
    g = rng(11)
    clean = g.multivariate_normal([0, 0, 0], [[1, 0.6, 0.2], [0.6, 1, 0.3], [0.2, 0.3, 1]], 180)
    bad = g.normal(8.0, 0.5, size=(20, 3))
    x = np.vstack([clean, bad])
    ours = mvdist.DistanceModel.fit(x, "mcd", seed=5)
    sk = MinCovDet(random_state=0).fit(x)
    # Both are robust: the location stays near the clean centre and far
    # from the contamination.
    assert np.linalg.norm(ours.location) < 0.3
    np.testing.assert_allclose(ours.location, sk.location_, atol=0.05)
    d_ours = ours.squared_distances(x)
    d_sk = sk.mahalanobis(x)
    top_ours = set(np.argsort(d_ours)[-20:])
    top_sk = set(np.argsort(d_sk)[-20:])
    assert top_ours == top_sk == set(range(180, 200))


@pytest.mark.parametrize("estimator", ["classical", "mcd"])
def test_affine_invariance(estimator):
    # Squared Mahalanobis distances under an affine-equivariant estimate do
    # not change when the rows are transformed x -> A x + b (invariance).
    g = rng(3)
    x = g.normal(size=(120, 4))
    a = g.normal(size=(4, 4)) + 4 * np.eye(4)
    b = g.normal(size=4)
    y = x @ a.T + b
    kw = {"seed": 9} if estimator == "mcd" else {}
    dx = mvdist.DistanceModel.fit(x, estimator, **kw).squared_distances(x)
    dy = mvdist.DistanceModel.fit(y, estimator, **kw).squared_distances(y)
    np.testing.assert_allclose(dx, dy, rtol=1e-8)


def test_p_values_follow_the_published_reference_laws(iris):
    x, _ = iris
    n, p = x.shape
    m = mvdist.DistanceModel.fit(x)
    d2 = m.squared_distances(x)
    # In-sample rows: n d²/(n-1)² ~ Beta(p/2, (n-p-1)/2) (Gnanadesikan and
    # Kettenring 1972).
    s = m.score(x, origin="in_sample")
    np.testing.assert_allclose(
        s.p_values, stats.beta.sf(n * d2 / (n - 1) ** 2, p / 2, (n - p - 1) / 2), rtol=1e-9
    )
    # New rows: n(n-p) d² / (p(n-1)(n+1)) ~ F(p, n-p) (Hotelling's T² for one
    # new observation).
    s = m.score(x, origin="new")
    f = n * (n - p) * d2 / (p * (n - 1) * (n + 1))
    np.testing.assert_allclose(s.p_values, stats.f.sf(f, p, n - p), rtol=1e-9)
    # Known parameters: chi-square with p degrees of freedom.
    s = m.score(x, origin="known")
    np.testing.assert_allclose(s.p_values, stats.chi2.sf(d2, p), rtol=1e-9)
    np.testing.assert_allclose(m.cutoff(0.01, "known"), stats.chi2.isf(0.01, p), rtol=1e-12)
    np.testing.assert_allclose(
        m.cutoff(0.01, "new"),
        stats.f.isf(0.01, p, n - p) * p * (n - 1) * (n + 1) / (n * (n - p)),
        rtol=1e-10,
    )


def test_new_row_p_values_have_their_nominal_size():
    # Size simulation (independent of the formula above): for normal data,
    # a new row's p-value is uniform, so P(p <= 0.1) = 0.1.
    g = rng(2026)
    reps, n, p = 3000, 15, 3
    hits = 0
    for _ in range(reps):
        x = g.normal(size=(n + 1, p))
        m = mvdist.DistanceModel.fit(x[:n])
        hits += m.score(x[n:], origin="new").p_values[0] <= 0.1
    se = np.sqrt(0.1 * 0.9 / reps)
    assert abs(hits / reps - 0.1) < 4 * se


def test_flags_and_adjustments():
    g = rng(8)
    x = g.normal(size=(300, 3))
    m = mvdist.DistanceModel.fit(x)
    s = m.score(np.vstack([x[:50], [[6, -6, 6]]]), origin="new")
    p = s.p_values
    np.testing.assert_array_equal(s.flags(0.05), p <= 0.05)
    np.testing.assert_allclose(s.adjusted_p_values("bonferroni"), np.minimum(p * len(p), 1))
    # Benjamini-Hochberg step-up adjustment (Benjamini and Hochberg 1995),
    # written out independently.
    order = np.argsort(p)
    ranked = p[order] * len(p) / np.arange(1, len(p) + 1)
    bh = np.minimum.accumulate(ranked[::-1])[::-1]
    expected = np.empty_like(bh)
    expected[order] = np.minimum(bh, 1)
    np.testing.assert_allclose(s.adjusted_p_values("benjamini_hochberg"), expected, rtol=1e-12)
    assert s.flags(0.01, "bonferroni")[-1]
    assert len(s) == 51
    assert s.origin == "new"
    assert s.reference["kind"]


def test_explain_terms_add_up(wine):
    x, _ = wine
    m = mvdist.DistanceModel.fit(x)
    row = x[10] + np.eye(x.shape[1])[4] * 40
    e = m.explain(row)
    np.testing.assert_allclose(e.total, m.squared_distance(row), rtol=1e-10)
    np.testing.assert_allclose(e.terms.sum(), e.total, rtol=1e-10)
    assert sorted(e.order) == list(range(x.shape[1]))
    assert e.top_variable == "column_4"
    given = m.explain(row, order=list(range(x.shape[1]))[::-1])
    np.testing.assert_allclose(given.total, e.total, rtol=1e-10)
    # The first term of a given order is that variable's own standardized
    # square (common practice: the marginal term).
    j = x.shape[1] - 1
    np.testing.assert_allclose(
        given.terms[j], (row[j] - m.location[j]) ** 2 / m.covariance[j, j], rtol=1e-10
    )


def test_scorer_agrees_with_model():
    g = rng(4)
    x = g.normal(size=(200, 5))
    m = mvdist.DistanceModel.fit(x)
    sc = m.scorer(0.01, "new")
    assert sc.cutoff == pytest.approx(m.cutoff(0.01, "new"), rel=1e-12)
    y = g.normal(size=(100, 5)) * 1.8
    d2 = m.squared_distances(y)
    np.testing.assert_array_equal(sc.flag_rows(y), d2 > sc.cutoff)
    for r in y[:10]:
        d, pv, flagged = sc.score_row(r)
        assert d == pytest.approx(m.squared_distance(r), rel=1e-12)
        assert flagged == sc.flag_row(r) == (d > sc.cutoff)
        assert 0 <= pv <= 1


def test_from_parts():
    m = mvdist.DistanceModel.from_parts([1.0, 2.0], [[4.0, 0.0], [0.0, 9.0]], 100, ["a", "b"])
    assert m.squared_distance([3.0, 5.0]) == pytest.approx(1.0 + 1.0)
    assert m.variables == ["a", "b"]
    assert m.fit_method["kind"] == "supplied"
