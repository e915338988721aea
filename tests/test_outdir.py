"""OutputFolder: an output folder written as one unit."""

from __future__ import annotations

import json

import pytest

from workbench.errors import WorkbenchError
from workbench.fileio import outdir
from workbench.fileio.outdir import MANIFEST, OutputFolder, check_output_file


def _write(out, names, text):
    for n in names:
        (out / n).write_text(text)


class TestOutputFolder:
    @pytest.mark.parametrize("exchange", [True, False], ids=["renameat2", "two-renames"])
    def test_commit_replaces_the_whole_set(self, tmp_path, monkeypatch, exchange):
        """A committed run replaces the old set at once: its files and manifest, nothing of the old left."""
        if not exchange:
            monkeypatch.setattr(outdir, "_EXCHANGE", None)
        target = tmp_path / "out"
        with OutputFolder(target, command="t", names=("a.txt", "b.txt", "c.txt")) as out:
            _write(out.path, ["a.txt", "b.txt", "c.txt"], "old")
            out.commit()
        with OutputFolder(target, command="t", names=("a.txt", "b.txt", "c.txt")) as out:
            assert out.path.parent == tmp_path and out.path != target
            _write(out.path, ["a.txt", "b.txt"], "new")
            out.commit()
        assert sorted(p.name for p in target.iterdir()) == [MANIFEST, "a.txt", "b.txt"]
        assert (target / "a.txt").read_text() == "new"
        assert json.loads((target / MANIFEST).read_text())["files"] == ["a.txt", "b.txt"]
        assert sorted(p.name for p in tmp_path.iterdir()) == [".out.lock", "out"]

    def test_error_keeps_the_old_set(self, tmp_path):
        """Leaving the block by an exception (or Ctrl-C) removes the staging folder and keeps the old set."""
        target = tmp_path / "out"
        with OutputFolder(target, command="t") as out:
            _write(out.path, ["a.txt"], "old")
            out.commit()
        with pytest.raises(KeyboardInterrupt):
            with OutputFolder(target, command="t") as out:
                _write(out.path, ["a.txt"], "new")
                raise KeyboardInterrupt
        assert (target / "a.txt").read_text() == "old"
        assert sorted(p.name for p in tmp_path.iterdir()) == [".out.lock", "out"]

    def test_strays_of_killed_runs_removed(self, tmp_path):
        """Staging folders of killed runs beside the folder are removed by the next run."""
        (tmp_path / ".out.tmp-123-abcdef01").mkdir()
        (tmp_path / ".out.tmp-123-abcdef01" / "x.png").write_text("half")
        with OutputFolder(tmp_path / "out", command="t") as out:
            assert not (tmp_path / ".out.tmp-123-abcdef01").exists()
            out.commit()

    def test_kill_between_the_two_renames_restores_the_old_set(self, tmp_path):
        """When a kill fell between 'old aside' and 'new in', the next run puts the old set back first."""
        old = tmp_path / ".out.old-1234abcd"
        old.mkdir()
        (old / "a.txt").write_text("old")
        with OutputFolder(tmp_path / "out", command="t", names=("a.txt",)):
            assert (tmp_path / "out" / "a.txt").read_text() == "old"
            assert not old.exists()

    def test_foreign_folder_refused(self, tmp_path):
        """A folder holding files the workbench did not write is never replaced."""
        (tmp_path / "mine").mkdir()
        (tmp_path / "mine" / "thesis.tex").write_text("x")
        with pytest.raises(WorkbenchError) as e:
            OutputFolder(tmp_path / "mine", option="--out", command="fit", names=("design.toml",)).__enter__()
        assert str(e.value) == (f"--out {tmp_path / 'mine'}: the folder holds files the workbench did not write "
                                "(thesis.tex); the output replaces the whole folder — choose a new or empty folder")

    @pytest.mark.parametrize("name", [".", "..", "/"])
    def test_current_parent_root_refused(self, name, tmp_path, monkeypatch):
        """'.', '..' and '/' are refused as output folders."""
        monkeypatch.chdir(tmp_path)
        with pytest.raises(WorkbenchError, match="a folder of its own"):
            OutputFolder(name).__enter__()

    def test_lock_refuses_a_second_writer(self, tmp_path):
        """A second OutputFolder on the same folder is refused while the first holds the lock."""
        with OutputFolder(tmp_path / "out"):
            with pytest.raises(WorkbenchError, match="another run is writing this folder"):
                OutputFolder(tmp_path / "out").__enter__()
        with OutputFolder(tmp_path / "out"):  # released
            pass


class TestCheckOutputFile:
    def test_under_a_file(self, tmp_path):
        """A file name below an existing file is refused before computing."""
        (tmp_path / "f").write_text("x")
        with pytest.raises(WorkbenchError) as e:
            check_output_file(tmp_path / "f" / "x.csv", option="--csv")
        assert str(e.value) == f"--csv {tmp_path / 'f' / 'x.csv'}: {tmp_path / 'f'} is a file; expected a folder there"

    def test_a_folder(self, tmp_path):
        """A folder given as the output file is refused."""
        with pytest.raises(WorkbenchError, match="is a folder; expected a file name"):
            check_output_file(tmp_path, option="--csv")
