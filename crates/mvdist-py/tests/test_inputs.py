"""Array layouts, dtypes, DataFrames and bad input."""

import numpy as np
import pytest

import mvdist

from conftest import rng


@pytest.fixture(scope="module")
def fitted():
    x = rng(1).normal(size=(200, 4))
    return x, mvdist.DistanceModel.fit(x)


def test_layouts_give_identical_results(fitted):
    x, m = fitted
    expected = m.squared_distances(np.ascontiguousarray(x))
    np.testing.assert_array_equal(m.squared_distances(np.asfortranarray(x)), expected)
    wide = np.zeros((200, 8))
    wide[:, ::2] = x
    view = wide[:, ::2]
    assert not view.flags.c_contiguous
    np.testing.assert_array_equal(m.squared_distances(view), expected)
    np.testing.assert_array_equal(m.squared_distances(x[::-1])[::-1], expected)
    ro = x.copy()
    ro.flags.writeable = False
    np.testing.assert_array_equal(m.squared_distances(ro), expected)
    np.testing.assert_array_equal(m.squared_distances(x.tolist()), expected)


def test_float32_equals_widened_rows(fitted):
    x, m = fitted
    x32 = x.astype(np.float32)
    np.testing.assert_array_equal(
        m.squared_distances(x32), m.squared_distances(x32.astype(np.float64))
    )
    assert m.squared_distance(x32[0]) == m.squared_distance(x32[0].astype(np.float64))
    m32 = mvdist.DistanceModel.fit(x32)
    m64 = mvdist.DistanceModel.fit(x32.astype(np.float64))
    np.testing.assert_array_equal(m32.covariance, m64.covariance)


def test_integer_and_byte_swapped_arrays_are_converted(fitted):
    _, m = fitted
    ints = np.array([[1, 2, 3, 4], [0, 0, 0, 0]], dtype=np.int32)
    np.testing.assert_array_equal(m.squared_distances(ints), m.squared_distances(ints * 1.0))
    swapped = (ints * 1.0).astype(">f8")
    np.testing.assert_array_equal(m.squared_distances(swapped), m.squared_distances(ints * 1.0))


def test_data_frame_names_become_variables():
    pd = pytest.importorskip("pandas")
    x = rng(2).normal(size=(60, 3))
    df = pd.DataFrame(x, columns=["temp", "ph", "gravity"])
    m = mvdist.DistanceModel.fit(df)
    assert m.variables == ["temp", "ph", "gravity"]
    np.testing.assert_array_equal(m.squared_distances(df), m.squared_distances(x))
    with pytest.raises(mvdist.MvdistError, match="'ph'"):
        m.squared_distances(df[["temp", "gravity", "ph"]])
    # A plain array skips the name check.
    m.squared_distances(df[["temp", "gravity", "ph"]].to_numpy())
    e = m.explain(x[0] + [0, 9, 0])
    assert e.top_variable == "ph"
    # A row of a DataFrame (a Series) is read like its values.
    assert m.squared_distance(df.iloc[3]) == m.squared_distance(x[3])
    with pytest.raises(mvdist.MvdistError, match="single number"):
        m.squared_distance(2.5)
    bad = df.assign(label=["a"] * 60)
    with pytest.raises(mvdist.MvdistError, match="column 3 \\('label'\\)"):
        mvdist.DistanceModel.fit(bad)
    nullable = df.astype({"ph": "float64"}).copy()
    nullable["count"] = pd.array([1] * 59 + [None], dtype="Int64")
    with pytest.raises(mvdist.MvdistError) as err:
        mvdist.DistanceModel.fit(nullable)
    assert err.value.kind == "non_finite"
    assert "row 59, column 3" in str(err.value)
    f32 = pd.DataFrame(x.astype(np.float32), columns=["a", "b", "c"])
    assert mvdist.DistanceModel.fit(f32).variables == ["a", "b", "c"]


def kind_of(call):
    with pytest.raises(mvdist.MvdistError) as err:
        call()
    assert isinstance(err.value, ValueError)
    return err.value.kind, str(err.value)


def test_bad_input_raises_typed_errors(fitted):
    x, m = fitted
    y = x.copy()
    y[7, 2] = np.nan
    kind, msg = kind_of(lambda: mvdist.DistanceModel.fit(y))
    assert kind == "non_finite" and "row 7, column 2" in msg
    y[7, 2] = np.inf
    kind, msg = kind_of(lambda: m.squared_distances(y))
    assert kind == "non_finite" and "row 7, column 2" in msg
    kind, _ = kind_of(lambda: m.squared_distances(x[:, :3]))
    assert kind == "shape_mismatch"
    kind, msg = kind_of(lambda: m.squared_distances(x[0]))
    assert kind == "invalid_parameter" and "2-D" in msg
    kind, _ = kind_of(lambda: m.squared_distances(np.zeros((2, 2, 2))))
    assert kind == "invalid_parameter"
    kind, _ = kind_of(lambda: mvdist.DistanceModel.fit(x[:4]))
    assert kind == "too_few_rows"
    kind, _ = kind_of(lambda: mvdist.DistanceModel.fit(np.empty((0, 3))))
    assert kind in ("empty", "too_few_rows")
    const = x.copy()
    const[:, 1] = 5.0
    kind, msg = kind_of(lambda: mvdist.DistanceModel.fit(const))
    assert kind == "zero_variance" and "column 1" in msg
    collinear = np.column_stack([x, x[:, 0] + 2 * x[:, 1]])
    kind, _ = kind_of(lambda: mvdist.DistanceModel.fit(collinear))
    assert kind == "collinear"
    kind, msg = kind_of(lambda: mvdist.DistanceModel.fit(np.array([[1, "a"], [2, "b"]], dtype=object)))
    assert "object" in msg
    kind, _ = kind_of(lambda: mvdist.DistanceModel.fit(np.array([["1", "2"], ["3", "4"]])))
    assert kind == "invalid_parameter"
    kind, _ = kind_of(lambda: mvdist.DistanceModel.fit(x, "robust"))
    kind, msg = kind_of(lambda: mvdist.DistanceModel.fit(x, "classical", seed=1))
    assert "seed" in msg
    kind, _ = kind_of(lambda: m.score(x, origin="old"))
    assert kind == "invalid_parameter"
    for alpha in (0.0, 1.0, -1.0, float("nan")):
        kind, _ = kind_of(lambda: m.cutoff(alpha))
        assert kind == "invalid_parameter"
        kind, _ = kind_of(lambda: m.score(x).flags(alpha))
    kind, _ = kind_of(lambda: m.score(x).flags(0.05, "holm"))
    kind, _ = kind_of(lambda: m.squared_distance([1.0, 2.0]))
    assert kind == "shape_mismatch"
    kind, _ = kind_of(lambda: m.squared_distance("abcd"))
    kind, _ = kind_of(lambda: m.squared_distances(x, threads=0))
    kind, _ = kind_of(lambda: mvdist.DistanceModel.fit(x, "mcd", support_fraction=1.5))
    assert kind == "invalid_parameter"


def test_thread_environment_variable(monkeypatch, fitted):
    x, m = fitted
    monkeypatch.setenv("MVDIST_THREADS", "1")
    assert mvdist.thread_count() == 1
    one = m.squared_distances(x)
    monkeypatch.setenv("MVDIST_THREADS", "two")
    with pytest.raises(mvdist.MvdistError, match="MVDIST_THREADS"):
        m.squared_distances(x)
    monkeypatch.delenv("MVDIST_THREADS")
    np.testing.assert_array_equal(m.squared_distances(x, threads=2), one)
    assert mvdist.thread_count(3) == 3
