"""The statistics file: round trip, refusal of damaged files, and the page exploring it."""

import json

import numpy as np
import pytest

import core
from app.cli import main
from app.model import PageModel
from app.session import Session
from core.errors import DataError
from core.statsfile import load_stats, save_stats


@pytest.fixture
def csvs(tmp_path):
    rng = np.random.default_rng(11)
    for i, n in enumerate((4000, 2500, 6000)):
        x = rng.uniform(0, 5, n)
        y = np.log1p(x) + 0.05 * rng.normal(size=n)
        (tmp_path / f"log{i}.csv").write_text("load [kN],strain [ue]\n" + "".join(f"{a:.17g},{b:.17g}\n" for a, b in zip(x, y)))
    return tmp_path


def test_cli_engine_folder_and_stats_round_trip(csvs, tmp_path, capsys):
    """sweep over a folder with the local engine, save statistics, reload: identical CV numbers."""
    stats = tmp_path / "s.json"
    assert main(["sweep", str(csvs), "--x", "load", "--y", "strain", "--engine", "local", "--degrees", "0-8",
                 "--folds", "4", "--test-fraction", "0.1", "--save-stats", str(stats)]) == 0
    out = capsys.readouterr().out
    assert out.startswith("12500 rows (") and "hash folds k=4" in out
    engine, meta = load_stats(stats)
    assert meta["x_column"] == "load [kN]" and engine.plan.scheme == "hash"
    from core.distributed import expand_paths, sweep_files

    ref, _ = sweep_files(expand_paths(csvs), range(0, 9), [1e-2], x="load", y="strain", folds=4, test_fraction=0.1)
    m, se, _ = engine.cv_summary(5, [1e-2])
    assert m[0] == ref.cv_mse[5, 0] and se[0] == ref.cv_mse_se[5, 0]
    assert engine.test_mse(3, 0.1) == ref.engine.test_mse(3, 0.1)


def test_page_explores_statistics_without_rows(csvs, tmp_path):
    """The page model explores a statistics file: CV numbers equal the loaded engine's, folds stay
    fixed (a new seed is refused in the status), and the choice is fitted from the statistics."""
    stats = tmp_path / "s.json"
    assert main(["sweep", str(csvs), "--x", "1", "--y", "2", "--engine", "local", "--degrees", "0-6",
                 "--folds", "4", "--save-stats", str(stats)]) == 0
    session = Session()
    model = PageModel(session, stats=stats)
    session.degree, session.log_lambda = 4, -2.0
    engine, _ = load_stats(stats, penalty=session.penalty)
    assert model.out["cv_mse"] == pytest.approx(engine.cv_summary(4, [1e-2])[0][0], rel=1e-12)
    assert not model.has_rows
    session.seed = 5
    assert "fix the folds" in model.status
    doc = model.choice().to_dict()
    assert doc["validation"]["scheme"] == "hash" and doc["model"]["degree"] == 4


@pytest.mark.parametrize("edit, text", [
    (lambda d: d.update(format="other"), "field 'format'"),
    (lambda d: d.update(version=3), "Statistics file field 'version': expected 1, got 3."),
    (lambda d: d["cells"].pop(), "Statistics file field 'cells': expected 5 cells for k = 4, repeats = 1"),
    (lambda d: d["cells"][0].update(gram=[[1.0]]), "Statistics file field 'cells"),
])
def test_damaged_statistics_are_refused(csvs, tmp_path, edit, text):
    stats = tmp_path / "s.json"
    assert main(["sweep", str(csvs / "log0.csv"), "--x", "1", "--y", "2", "--engine", "local", "--degrees", "0-3",
                 "--folds", "4", "--save-stats", str(stats)]) == 0
    doc = json.loads(stats.read_text())
    edit(doc)
    stats.write_text(json.dumps(doc))
    with pytest.raises(DataError) as err:
        load_stats(stats)
    assert text in str(err.value)
