"""Model files, pickling and concurrent use from Python threads."""

import pickle
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest

import mvdist

from conftest import rng


def test_model_files_round_trip(tmp_path, iris):
    x, _ = iris
    m = mvdist.DistanceModel.fit(x, "mcd", seed=2, variables=["sl", "sw", "pl", "pw"])
    for binary in (False, True):
        path = tmp_path / f"model-{binary}.mvd"
        m.save(path, binary=binary)
        back = mvdist.DistanceModel.load(str(path))
        assert back.variables == ["sl", "sw", "pl", "pw"]
        assert back.fit_method == m.fit_method
        np.testing.assert_array_equal(back.squared_distances(x), m.squared_distances(x))
    back = mvdist.DistanceModel.from_bytes(m.to_bytes())
    np.testing.assert_array_equal(back.covariance, m.covariance)
    back = mvdist.DistanceModel.from_bytes(m.to_json().encode())
    np.testing.assert_array_equal(back.location, m.location)


def test_bad_files_raise_and_write_nothing(tmp_path, iris):
    x, _ = iris
    m = mvdist.DistanceModel.fit(x)
    data = bytearray(m.to_bytes())
    data[len(data) // 2] ^= 0xFF
    with pytest.raises(mvdist.MvdistError) as err:
        mvdist.DistanceModel.from_bytes(bytes(data))
    assert err.value.kind == "format"
    with pytest.raises(mvdist.MvdistError) as err:
        mvdist.DistanceModel.from_bytes(b"not a model")
    assert err.value.kind == "format"
    with pytest.raises(mvdist.MvdistError) as err:
        mvdist.DistanceModel.load(tmp_path / "missing.json")
    assert err.value.kind == "io"
    target = tmp_path / "no-such-dir" / "m.json"
    with pytest.raises(mvdist.MvdistError) as err:
        m.save(target)
    assert err.value.kind == "io"
    assert not target.exists()


def test_pickle_every_stateful_type(iris):
    x, y = iris
    m = mvdist.DistanceModel.fit(x, "ledoit_wolf")
    m2 = pickle.loads(pickle.dumps(m))
    np.testing.assert_array_equal(m2.squared_distances(x), m.squared_distances(x))
    labels = np.array(["setosa", "versicolor", "virginica"])[y]
    c = mvdist.Classifier.fit(x, labels, rule="quadratic")
    c2 = pickle.loads(pickle.dumps(c))
    assert c2.classes == c.classes
    np.testing.assert_array_equal(c2.predict(x).posteriors, c.predict(x).posteriors)
    chart = mvdist.ControlChart.individuals(x[y == 0], alpha=0.01)
    chart2 = pickle.loads(pickle.dumps(chart))
    np.testing.assert_array_equal(
        chart2.monitor(x[y == 1]).t_squared, chart.monitor(x[y == 1]).t_squared
    )


def test_concurrent_calls_from_python_threads():
    g = rng(12)
    x = g.normal(size=(20000, 6))
    m = mvdist.DistanceModel.fit(x)
    expected = m.squared_distances(x, threads=1)
    blocks = [x[i::8] for i in range(8)]

    def work(i):
        return i, m.squared_distances(blocks[i], threads=1), m.score(blocks[i]).p_values

    with ThreadPoolExecutor(max_workers=4) as pool:
        results = list(pool.map(work, range(8)))
    for i, d2, p in results:
        np.testing.assert_array_equal(d2, expected[i::8])
        assert p.shape == d2.shape
    sc = m.scorer(0.001)
    with ThreadPoolExecutor(max_workers=4) as pool:
        flags = list(pool.map(sc.flag_row, list(x[:400])))
    np.testing.assert_array_equal(flags, expected[:400] > sc.cutoff)


def test_threads_argument_does_not_change_results():
    x = rng(13).normal(size=(5000, 5))
    m = mvdist.DistanceModel.fit(x)
    np.testing.assert_array_equal(m.squared_distances(x, threads=1), m.squared_distances(x, threads=2))
    a = mvdist.DistanceModel.fit(x, "mcd", seed=4, threads=1)
    b = mvdist.DistanceModel.fit(x, "mcd", seed=4, threads=2)
    np.testing.assert_array_equal(a.covariance, b.covariance)
