"""All-or-nothing outputs (self-consistency): a failure leaves the old output untouched."""

from __future__ import annotations

import os
import stat

import pytest

from mapsection._atomic import atomic_dir, atomic_file
from mapsection.errors import OutputError


def test_file_replaced_only_on_success(tmp_path):
    target = tmp_path / "out.csv"
    target.write_text("old")
    with pytest.raises(RuntimeError):
        with atomic_file(target) as tmp:
            tmp.write_text("half")
            raise RuntimeError("boom")
    assert target.read_text() == "old" and os.listdir(tmp_path) == ["out.csv"]
    with atomic_file(target) as tmp:
        tmp.write_text("new")
    assert target.read_text() == "new" and os.listdir(tmp_path) == ["out.csv"]
    # a new file gets the permissions the umask gives, not mkstemp's private 0600
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(target.stat().st_mode) == 0o666 & ~mask


def test_file_errors(tmp_path):
    with pytest.raises(OutputError, match="does not exist"):
        with atomic_file(tmp_path / "missing" / "out.csv"):
            pass
    with pytest.raises(OutputError, match="is a folder"):
        with atomic_file(tmp_path):
            pass


def test_dir_replaced_whole_only_on_success(tmp_path):
    target = tmp_path / "A"
    target.mkdir()
    (target / "section.png").write_text("old build")
    with pytest.raises(RuntimeError):
        with atomic_dir(target) as tmp:
            (tmp / "section.png").write_text("half")
            raise RuntimeError("boom")
    assert (target / "section.png").read_text() == "old build"
    assert sorted(os.listdir(tmp_path)) == ["A"]
    with atomic_dir(target) as tmp:
        (tmp / "checks.json").write_text("{}")
    assert sorted(os.listdir(target)) == ["checks.json"]  # old files gone: replaced whole
    assert sorted(os.listdir(tmp_path)) == ["A"]
