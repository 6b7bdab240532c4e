"""Safe output folders: links never followed, one run per folder, runs never mix,
journal rows verified, plots optional, failures leave nothing of their own behind."""

from __future__ import annotations

import copy
import json
import os
import sqlite3
import subprocess
import sys
import textwrap

import pytest
import yaml

import featuresift.outputs as outputs
from featuresift.cli import main
from featuresift.demo import GRAIN_CONFIG, GRAIN_TARGET, make_grain_lots
from featuresift.errors import InputError
from featuresift.outputs import RunFolder, latest_run, write_files

pytestmark = pytest.mark.usefixtures("single_blas_thread")

CANDIDATES = ["moisture_pct", "test_weight_kg_hl", "protein_nir_pct", "falling_number_s"]


def _config(tmp_path, name="lab", **changes):
    frame = make_grain_lots(n_lots=90, seed=3)
    frame[[GRAIN_TARGET, *CANDIDATES]].to_csv(tmp_path / "lots.csv", index=False)
    cfg = copy.deepcopy(GRAIN_CONFIG)
    cfg["data"] = {"path": "lots.csv", "target": GRAIN_TARGET}
    cfg["costs"] = {"unit": "EUR", "features": {c: float(i + 1)
                                                for i, c in enumerate(CANDIDATES)}}
    cfg["budget"] = None
    cfg["cv"] = {"folds": 3, "seed": 0}
    cfg["strategy"] = {"name": "forward", "options": {"n_features": 2}}
    cfg["output"] = {"folder": "out"}
    cfg["engine"] = {"progress": False}
    cfg.update(changes)
    path = tmp_path / f"{name}.yaml"
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    return path


def _snapshot(folder):
    """Every path below ``folder`` with its kind and bytes (links not followed)."""
    found = {}
    for base, dirs, files in os.walk(folder):
        for name in dirs + files:
            p = os.path.join(base, name)
            rel = os.path.relpath(p, folder)
            if os.path.islink(p):
                found[rel] = ("link", os.readlink(p))
            elif os.path.isdir(p):
                found[rel] = ("dir", None)
            else:
                with open(p, "rb") as fh:
                    found[rel] = ("file", fh.read())
    return found


# ------------------------------------------------------------------ symbolic links
def test_symlinked_output_folder_is_refused_and_never_written_through(tmp_path, capsys):
    path = _config(tmp_path)
    victim = tmp_path / "victim"
    victim.mkdir()
    (tmp_path / "link").symlink_to(victim)
    assert main(["run", str(path), "--output", str(tmp_path / "link")]) == 2
    err = capsys.readouterr().err
    assert "symbolic link" in err and str(tmp_path / "link") in err and "Traceback" not in err
    assert list(victim.iterdir()) == []
    # The same link planted as the YAML's output folder: named with its key.
    (tmp_path / "out").symlink_to(victim)
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert "output.folder" in err and "symbolic link" in err
    assert list(victim.iterdir()) == []


@pytest.mark.parametrize("planted", ["journal.sqlite", "journal.sqlite-wal", "latest.json",
                                     outputs.LOCK_NAME])
def test_symlinked_file_in_output_folder_is_refused(tmp_path, capsys, planted):
    path = _config(tmp_path)
    victim = tmp_path / "victim.txt"
    victim.write_text("precious\n")
    (tmp_path / "out").mkdir()
    (tmp_path / "out" / planted).symlink_to(victim)
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert "symbolic link" in err and planted in err and "Traceback" not in err
    assert victim.read_text() == "precious\n"
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == [planted]  # nothing added


def test_write_files_never_follows_links_at_the_final_or_temporary_name(tmp_path,
                                                                         monkeypatch):
    victim = tmp_path / "victim.txt"
    victim.write_text("precious\n")
    out = tmp_path / "out"
    out.mkdir()
    # A link at the final name is an error naming it; nothing is written.
    (out / "result.json").symlink_to(victim)
    with pytest.raises(InputError, match="result.json is a symbolic link"):
        write_files(out, {"result.json": "{}", "path.csv": "x\n"})
    assert sorted(p.name for p in out.iterdir()) == ["result.json"]
    (out / "result.json").unlink()
    # Links planted at the old fixed temporary name and at the next random one: the
    # temporary file is created exclusively, so neither is followed.
    (out / ".result.json.tmp").symlink_to(victim)
    tokens = iter(["planted0", "fresh001"])
    monkeypatch.setattr(outputs.secrets, "token_hex", lambda n: next(tokens))
    (out / ".result.json.planted0.tmp").symlink_to(victim)
    [written] = write_files(out, {"result.json": "{}\n"})
    assert victim.read_text() == "precious\n"
    assert written.read_text() == "{}\n" and not written.is_symlink()
    assert not (out / ".result.json.fresh001.tmp").exists()  # renamed into place


# ------------------------------------------------------------------ journal checksums
def test_tampered_journal_row_is_refitted_and_reported(tmp_path, capsys):
    path = _config(tmp_path)
    assert main(["run", str(path)]) == 0
    first = json.loads((latest_run(tmp_path / "out") / "result.json").read_text())
    capsys.readouterr()
    # Make the worst single measurement look perfect in the journal (a plausible edit that
    # would make forward selection take it first).
    journal = tmp_path / "out" / "journal.sqlite"
    with sqlite3.connect(journal) as con:
        rows = con.execute("SELECT subset, folds FROM featuresift_evaluations "
                           "WHERE subset NOT LIKE '% %'").fetchall()
        worst = min(rows, key=lambda r: sum(f[0] for f in json.loads(r[1])))[0]
        con.execute("UPDATE featuresift_evaluations SET folds = ? WHERE subset = ?",
                    (json.dumps([[1.0, 0.01]] * 3), worst))
    con.close()
    assert main(["run", str(path)]) == 0
    out = capsys.readouterr().out
    second = json.loads((latest_run(tmp_path / "out") / "result.json").read_text())
    assert second["selected"] == first["selected"]
    assert second["score"] == first["score"]
    engine = second["extras"]["engine"]
    assert engine["n_journal_rejected"] == 1 and engine["n_journal_refitted"] == 1
    assert second["n_fits"] == 3  # only the tampered subset, on its 3 folds
    assert "1 journal row did not verify" in out
    assert "did not verify" in (latest_run(tmp_path / "out") / "report.md").read_text()
    with sqlite3.connect(journal) as con:  # the refit replaced the row with a verified one
        folds = con.execute("SELECT folds FROM featuresift_evaluations WHERE subset = ?",
                            (worst,)).fetchone()[0]
    con.close()
    assert json.loads(folds) != [[1.0, 0.01]] * 3


# ------------------------------------------------------------------ one run per folder
# Another run holding the folder, as featuresift.outputs does it (lock file with the pid,
# a staging folder being written), in plain Python so that it starts in milliseconds.
HOLDER = textwrap.dedent(
    """
    import fcntl, os, sys, time
    root = sys.argv[1]
    os.makedirs(root)
    fd = os.open(os.path.join(root, ".featuresift.lock"), os.O_RDWR | os.O_CREAT)
    fcntl.flock(fd, fcntl.LOCK_EX)
    os.write(fd, f"{os.getpid()}\\n".encode())
    os.mkdir(os.path.join(root, ".001-run.partial"))
    with open(os.path.join(root, ".001-run.partial", "result.json"), "w") as fh:
        fh.write("{}")
    print("locked", flush=True)
    time.sleep(60)
    """
)


def test_second_run_into_a_busy_folder_fails_clearly_and_mixes_nothing(tmp_path, capsys):
    path = _config(tmp_path)
    root = tmp_path / "out"
    holder = subprocess.Popen([sys.executable, "-c", HOLDER, str(root)],
                              stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "locked"
        before = _snapshot(root)
        assert main(["run", str(path)]) == 2
        err = capsys.readouterr().err
        assert str(root) in err and f"pid {holder.pid}" in err and "Traceback" not in err
        # Nothing of the refused run, nothing of the holder's removed.
        assert _snapshot(root) == before
        assert (root / ".001-run.partial" / "result.json").is_file()
    finally:
        holder.kill()
        holder.wait()
    # A featuresift run holding the folder in this very process: refused the same way.
    with RunFolder(root, "sweep"):
        assert main(["run", str(path)]) == 2
        assert f"pid {os.getpid()}" in capsys.readouterr().err
    # A killed holder never blocks the next run (the lock dies with its process); its
    # unfinished staging folder is left alone and numbered around.
    assert main(["run", str(path), "-q"]) == 0
    assert latest_run(root).name == "002-run"
    assert (root / ".001-run.partial").is_dir()


# ------------------------------------------------------------------ runs never mix
def test_run_sweep_run_with_budget_each_write_a_complete_consistent_set(tmp_path, capsys):
    path = _config(tmp_path)
    root = tmp_path / "out"
    assert main(["run", str(path)]) == 0
    first = _snapshot(root / "001-run")
    assert main(["sweep", str(path), "--budgets", "3,none"]) == 0
    assert main(["run", str(path), "--budget", "3"]) == 0
    out = capsys.readouterr().out
    assert sorted(p.name for p in root.iterdir()) == ["001-run", "002-sweep", "003-run",
                                                      "journal.sqlite", "latest.json"]
    assert _snapshot(root / "001-run") == first  # earlier runs are never touched
    run_files = ["path.csv", "report.md", "result.json", "selected.csv"]
    assert sorted(p.name for p in (root / "001-run").iterdir()) == run_files
    assert sorted(p.name for p in (root / "003-run").iterdir()) == run_files
    sweep_files = sorted(p.name for p in (root / "002-sweep").iterdir())
    assert sweep_files == ["frontier.csv", "frontier.json", "frontier.png",
                           "frontier_choices.csv", "report.md"]
    # Each set agrees with itself: report and result of 003 are both the budget-3 run.
    third = json.loads((root / "003-run" / "result.json").read_text())
    report = (root / "003-run" / "report.md").read_text()
    assert third["budget"] == 3.0 and third["cost"] <= 3.0
    assert "budget 3 EUR" in report and "Accuracy against cost" not in report
    assert "Accuracy against cost" in (root / "002-sweep" / "report.md").read_text()
    latest = json.loads((root / "latest.json").read_text())
    assert latest["folder"] == "003-run" and latest["files"] == sorted(
        run_files, key=["result.json", "selected.csv", "path.csv", "report.md"].index)
    assert latest["by_command"] == {"run": "003-run", "sweep": "002-sweep"}
    # The journal is shared per config: the later runs reuse the earlier evaluations.
    assert third["extras"]["engine"]["n_journal_hits"] > 0
    assert f"{third['extras']['engine']['n_journal_hits']} evaluations reused from the " \
           "journal" in out
    assert "reused from the journal" in report


def test_sweep_without_matplotlib_lists_no_plot_and_links_none(tmp_path, capsys,
                                                               monkeypatch):
    path = _config(tmp_path, engine={"progress": False, "journal": False})
    for name in [m for m in sys.modules if m == "matplotlib" or m.startswith("matplotlib.")]:
        monkeypatch.setitem(sys.modules, name, None)
    monkeypatch.setitem(sys.modules, "matplotlib", None)
    assert not outputs.plots_available()
    # Budget 3 twice: the second search is the first one again (same choice).
    assert main(["sweep", str(path), "--budgets", "3,3,none"]) == 0
    out = capsys.readouterr().out
    # The console table speaks the report's words and says why a point is not efficient.
    header = out.split("Scores: ")[1].splitlines()[1].split()
    assert header == ["budget", "measurements", "cost", "roc_auc", "(in-search)", "±", "s.e.",
                      "pick", "efficient"]
    assert "n_selected" not in out and "score_sem" not in out and "False" not in out
    same = "no: same choice as at budget 3"
    assert out.split("Scores: ")[1].splitlines()[3].endswith(same)
    assert f"| {same} |" in (latest_run(tmp_path / "out", "sweep") / "report.md").read_text()
    folder = latest_run(tmp_path / "out", "sweep")
    assert sorted(p.name for p in folder.iterdir()) == ["frontier.csv", "frontier.json",
                                                        "frontier_choices.csv", "report.md"]
    assert 'pip install "featuresift[plots]"' in out
    written = out.split("Results written to ")[1].splitlines()[0]
    assert "frontier.png" not in written
    report = (folder / "report.md").read_text()
    assert "frontier.png" not in report and 'pip install "featuresift[plots]"' in report
    assert "frontier.png" not in json.loads((tmp_path / "out" / "latest.json").read_text())[
        "files"]


def _nested_config(tmp_path):
    # One measurement per search, no noise guard: the 2 outer searches stay short.
    return _config(tmp_path, strategy={"name": "forward", "options": {"n_features": 1}},
                   engine={"progress": False, "journal": False}, guard="off")


def test_nested_png_written_listed_and_linked_by_run_and_sweep(tmp_path, capsys):
    import matplotlib.image
    import matplotlib.pyplot as plt

    path = _nested_config(tmp_path)
    figures = plt.get_fignums()
    assert main(["run", str(path), "--nested", "2"]) == 0
    assert main(["sweep", str(path), "--budgets", "3,none", "--nested", "2"]) == 0
    out = capsys.readouterr().out
    assert plt.get_fignums() == figures  # drawn on bare Figures: pyplot never used
    root = tmp_path / "out"
    for folder, text in zip((latest_run(root, "run"), latest_run(root, "sweep")),
                            out.split("Results written to ")[1:]):
        png = folder / "nested.png"
        # Reference: matplotlib's own PNG reader; 11 x 4.5 inches at 120 dpi.
        assert matplotlib.image.imread(png).shape[:2] == (540, 1320)
        assert "nested.png" in text.splitlines()[0]
        report = (folder / "report.md").read_text()
        nested_section = report.split("## Honest estimate (nested cross-validation)")[1]
        assert "](nested.png)" in nested_section.split("\n## ")[0]
        assert "No nested.png" not in text and "featuresift[plots]" not in report
    assert "nested.png" in json.loads((root / "latest.json").read_text())["files"]
    run_files = sorted(p.name for p in latest_run(root, "run").iterdir())
    assert run_files == ["nested.json", "nested.png", "path.csv", "report.md",
                         "result.json", "selected.csv"]


def test_nested_without_matplotlib_lists_no_plot_and_links_none(tmp_path, capsys,
                                                                monkeypatch):
    path = _nested_config(tmp_path)
    for name in [m for m in sys.modules if m == "matplotlib" or m.startswith("matplotlib.")]:
        monkeypatch.setitem(sys.modules, name, None)
    monkeypatch.setitem(sys.modules, "matplotlib", None)
    assert main(["run", str(path), "--nested", "2"]) == 0
    run_out = capsys.readouterr().out
    assert main(["sweep", str(path), "--budgets", "3,none", "--nested", "2"]) == 0
    sweep_out = capsys.readouterr().out
    hint = 'plots need matplotlib: pip install "featuresift[plots]"'
    assert f"No nested.png: {hint}" in run_out
    assert f"No frontier.png or nested.png: {hint}" in sweep_out
    root = tmp_path / "out"
    for folder, text in zip((latest_run(root, "run"), latest_run(root, "sweep")),
                            (run_out, sweep_out)):
        assert "nested.png" not in text.split("Results written to ")[1].splitlines()[0]
        assert not (folder / "nested.png").exists()
        report = (folder / "report.md").read_text()
        nested_section = report.split("## Honest estimate (nested cross-validation)")[1]
        assert "nested.png" not in report
        assert 'No plot was drawn: plots need matplotlib: pip install "featuresift[plots]"' \
            in nested_section.split("\n## ")[0]
    assert "nested.png" not in json.loads((root / "latest.json").read_text())["files"]


# ------------------------------------------------------------------ failures
def test_failing_run_leaves_an_existing_folder_exactly_as_it_was(tmp_path, capsys):
    path = _config(tmp_path)
    root = tmp_path / "out"
    assert main(["run", str(path), "-q", "--no-journal"]) == 0
    (root / "notes.txt").write_text("the lab's own notes\n")
    before = _snapshot(root)
    # Every fit fails: a fit failure into an existing folder that holds no journal yet.
    bad = _config(tmp_path, "bad", model={"estimator": "sklearn.linear_model.LogisticRegression",
                                   "params": {"l1_ratio": 1.0}})  # fails in fit (lbfgs: l2)
    assert main(["run", str(bad)]) == 2
    assert "could not be fitted" in capsys.readouterr().err
    assert _snapshot(root) == before  # no journal.sqlite, no run folder, no lock file
    # With a journal already there, it stays. It may gain the rows of evaluations that
    # did finish before the failure (the prior-only "nothing" reference): finished work is
    # kept for a resume, never removed; every other file is unchanged.
    assert main(["run", str(path), "-q"]) == 0
    before = _snapshot(root)
    assert main(["sweep", str(bad), "--budgets", "none"]) == 2
    after = _snapshot(root)
    assert "journal.sqlite" in after
    assert {k: v for k, v in after.items() if not k.startswith("journal.sqlite")} == {
        k: v for k, v in before.items() if not k.startswith("journal.sqlite")}


def test_run_folder_cleanup_removes_only_its_own_files(tmp_path):
    root = tmp_path / "new" / "out"
    with pytest.raises(RuntimeError), RunFolder(root, "run", journal="j.sqlite") as out:
        out.write_files({"result.json": "{}"})
        (root / "j.sqlite").write_text("journal made by this run")
        raise RuntimeError("boom")
    assert not (tmp_path / "new").exists()  # every folder it created, now empty, removed
    # Another process's file in a folder this run created keeps that folder.
    with pytest.raises(RuntimeError), RunFolder(root, "run") as out:
        (root / "other-run.txt").write_text("not ours")
        raise RuntimeError("boom")
    assert sorted(p.name for p in root.iterdir()) == ["other-run.txt"]
    # Interrupted (Ctrl-C): the journal this run created is kept to resume from.
    with pytest.raises(KeyboardInterrupt), RunFolder(root, "run", journal="j.sqlite"):
        (root / "j.sqlite").write_text("finished evaluations")
        raise KeyboardInterrupt
    assert sorted(p.name for p in root.iterdir()) == ["j.sqlite", "other-run.txt"]
