"""Loading a statistics file: every field is checked for type and shape, and a damaged file is
refused with a message naming the field (never a TypeError or KeyError from deep inside)."""

import json

import numpy as np
import pytest

import core
from core.errors import DataError
from core.statsfile import load_stats, save_stats


@pytest.fixture
def stats(tmp_path):
    rng = np.random.default_rng(5)
    x = rng.uniform(0, 4, 300)
    y = np.sqrt(x) + 0.1 * rng.normal(size=x.size)
    engine = core.build_engine(x, y, max_degree=3, folds=4)
    path = tmp_path / "s.json"
    save_stats(path, engine, {"file": "invented.csv", "x_column": "x", "y_column": "y"})
    return path


def damaged(path, edit):
    doc = json.loads(path.read_text())
    edit(doc)
    path.write_text(json.dumps(doc))
    return path


@pytest.mark.parametrize("edit, expected", [
    (lambda d: d.update(max_degree="3"), "Statistics file field 'max_degree': expected a whole number >= 0 and "
                                         "<= 30, got '3'."),
    (lambda d: d.update(max_degree=True), "Statistics file field 'max_degree': expected a whole number >= 0 and "
                                          "<= 30, got True."),
    (lambda d: d.pop("domain"), "Statistics file field 'domain': expected an object, got nothing."),
    (lambda d: d["domain"].update(half_width=0), "Statistics file field 'domain/half_width': expected a finite "
                                                 "number > 0, got 0."),
    (lambda d: d["domain"].update(center="0.5"), "Statistics file field 'domain/center': expected a finite number, "
                                                 "got '0.5'."),
    (lambda d: d["folds"].update(k="4"), "Statistics file field 'folds/k': expected a whole number >= 2 and "
                                         "<= 1000, got '4'."),
    (lambda d: d["folds"].update(repeats=[1]), "Statistics file field 'folds/repeats': expected a whole number "
                                               ">= 1 and <= 1000, got a list."),
    (lambda d: d["folds"].update(scheme="random"), "Statistics file field 'folds/scheme': expected one of 'kfold', "
                                                   "'hash', 'group', 'explicit', got 'random'."),
    (lambda d: d["folds"].update(test_fraction=1.5), "Statistics file field 'folds/test_fraction': expected a "
                                                     "finite number in [0.0, 1.0), got 1.5."),
    (lambda d: d.update(cells={"a": 1}), "Statistics file field 'cells': expected 5 cells for k = 4, repeats = 1, "
                                         "got a dict."),
    (lambda d: d["cells"][2].pop("count"), "Statistics file field 'cells/2/count': expected a whole number >= 0, "
                                           "got nothing."),
    (lambda d: d["cells"][1].update(count=-3), "Statistics file field 'cells/1/count': expected a whole number >= 0,"
                                               " got -3."),
    (lambda d: d["cells"][0].update(gram=[[1, 2], [3, 4]]), "Statistics file field 'cells/0/gram': expected a "
                                                            "5 x 5 matrix (lists of numbers), got a list."),
    (lambda d: d["cells"][0]["gram"][1].__setitem__(2, "7"), "Statistics file field 'cells/0/gram': expected "
                                                             "numbers only, got '7'."),
    (lambda d: d["cells"][3].update(gram=None), "Statistics file field 'cells/3/gram': expected a 5 x 5 matrix "
                                                "(lists of numbers), got None."),
    (lambda d: d.update(intercept="yes"), "Statistics file field 'intercept': expected true or false, got 'yes'."),
    (lambda d: d.update(y_shift=None), "Statistics file field 'y_shift': expected a finite number, got None."),
    (lambda d: d.update(data=[1]), "Statistics file field 'data': expected an object, got a list."),
])
def test_wrong_types_name_the_field(stats, edit, expected):
    """Strings for numbers, wrong shapes and missing keys: a DataError naming the field and the fix."""
    with pytest.raises(DataError) as err:
        load_stats(damaged(stats, edit))
    assert str(err.value) == expected + " Write the file again with `curvewright sweep --save-stats`."


def test_good_file_still_loads(stats):
    """The checks accept the file the sweep wrote."""
    engine, data = load_stats(stats)
    assert data["file"] == "invented.csv" and engine.plan.k == 4


def test_statistics_file_size_is_capped(stats, monkeypatch):
    """A file larger than the stated cap is refused before it is parsed."""
    import core.statsfile

    monkeypatch.setattr(core.statsfile, "MAX_STATS_BYTES", 100)
    with pytest.raises(DataError, match=r"^Statistics file 's.json': expected at most 0 MB, got"):
        load_stats(stats)
