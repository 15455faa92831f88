"""Atomic writes: an interrupted write leaves the old file (or none) and no temporary file."""

from __future__ import annotations

import os

import pytest

from budget import _output as output
from budget._errors import InputError
from budget._output import write_atomic


def test_complete_write(tmp_path):
    target = tmp_path / "report.html"
    write_atomic(target, "new")
    assert target.read_text() == "new"
    assert os.listdir(tmp_path) == ["report.html"]
    mask = os.umask(0)
    os.umask(mask)
    assert target.stat().st_mode & 0o777 == 0o666 & ~mask


def test_interrupted_write_keeps_the_old_file(tmp_path, monkeypatch):
    target = tmp_path / "report.html"
    target.write_text("old")

    def interrupted(source, destination):
        raise KeyboardInterrupt

    monkeypatch.setattr(output.os, "replace", interrupted)
    with pytest.raises(KeyboardInterrupt):
        write_atomic(target, "new")
    assert target.read_text() == "old"
    assert os.listdir(tmp_path) == ["report.html"]


def test_missing_folder(tmp_path):
    with pytest.raises(InputError) as caught:
        write_atomic(tmp_path / "nowhere" / "r.html", "x")
    assert str(caught.value) == (f"{tmp_path / 'nowhere' / 'r.html'}: expected an existing "
                                 "folder for the output file, found none")
