"""The input-limits policy: regular files only, size limits, grid steps, counts."""

from __future__ import annotations

import os

import pytest

from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio.limits import (Limits, check_count, check_regular_file, check_step, limits, parse_limit,
                                     raised, read_limited, shorten)
from workbench.model.spectra import grid


class TestReadLimited:
    def test_fifo_refused_without_blocking(self, tmp_path):
        """A FIFO with no writer is refused at once (opening it would block)."""
        f = tmp_path / "p"
        os.mkfifo(f)
        with pytest.raises(InputFileError) as e:
            read_limited(f)
        assert str(e.value) == f"{f}: cannot read: a FIFO (named pipe); expected a regular file"

    def test_device_refused(self):
        """/dev/zero is refused before a byte is read."""
        with pytest.raises(InputFileError, match="a character device; expected a regular file"):
            read_limited("/dev/zero")

    def test_directory_message_unchanged(self, tmp_path):
        """A folder gives the reader's long-standing message."""
        with pytest.raises(InputFileError) as e:
            read_limited(tmp_path)
        assert str(e.value) == f"{tmp_path}: cannot read: Is a directory"

    def test_size_limit(self, tmp_path):
        """Reading stops at the size limit with one line naming the limit and how to raise it."""
        f = tmp_path / "big.csv"
        f.write_bytes(b"x" * 3000)
        with pytest.raises(InputFileError) as e:
            read_limited(f, max_bytes=1024)
        assert str(e.value) == (f"{f}: larger than the limit of 0.000976562 MiB (it holds 0.0 MiB); reading "
                                "stopped — raise it with --limit file_mb=… or WORKBENCH_LIMITS")
        assert read_limited(f, max_bytes=3000) == b"x" * 3000

    def test_regular_file(self, tmp_path):
        """A regular file passes the check."""
        f = tmp_path / "a"
        f.write_text("1")
        assert check_regular_file(f).st_size == 1


class TestLimitsSettings:
    def test_parse(self):
        """NAME=VALUE pairs are parsed and checked."""
        assert parse_limit("trials=5000000, file_mb=4096") == {"trials": 5000000, "file_mb": 4096.0}
        for bad, msg in (("bogus=1", "limit must be one of"), ("trials=-1", "must be a number > 0"),
                         ("trials=1.5", "whole number"), ("trials", "NAME=VALUE")):
            with pytest.raises(WorkbenchError, match=msg):
                parse_limit(bad)

    def test_raised_is_scoped(self):
        """raised() changes a limit inside the block only."""
        with raised(trials=5):
            assert limits().trials == 5
        assert limits() == Limits()

    def test_count(self):
        """A count above its limit is refused naming the option, the limit and how to raise it."""
        with pytest.raises(WorkbenchError) as e:
            check_count(1_000_000_000, "trials", "trials", where="--trials")
        assert str(e.value) == ("--trials: 1000000000 trials is above the limit of 1000000; raise it with "
                                "--limit trials=… or WORKBENCH_LIMITS")

    def test_shorten(self):
        """Long input is echoed shortened with its length."""
        assert shorten("a" * 100, 5) == "aaaaa…(100 characters)" and shorten("abc", 5) == "abc"


class TestGridSteps:
    @pytest.mark.parametrize("step, message", [
        (1e-300, "grid step must be at least 0.01 nm (got 1e-300 nm)"),
        (1e-9, "grid step must be at least 0.01 nm (got 1e-09 nm)"),
        (1000, "grid step must be at most the range 380-780 nm, 400 nm (got 1000 nm)"),
    ])
    def test_refused(self, step, message):
        """Steps below 0.01 nm or above the range are refused before anything is allocated."""
        with pytest.raises(WorkbenchError) as e:
            grid(380, 780, step)
        assert str(e.value) == message

    def test_bands_limit(self):
        """A grid holding more wavelengths than the bands limit is refused."""
        with pytest.raises(WorkbenchError, match="holds 400001 wavelengths, above the limit of 100000"):
            check_step(380, 4380, 0.01)
        assert check_step(380, 780, 0.01) == 40000
