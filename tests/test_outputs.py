"""The output folder never overwrites without force and never leaves partial files."""

from __future__ import annotations

import json

import pytest

from agepost.errors import OutputExistsError
from agepost.outputs import OutputFolder, dumps_json


def test_refuses_existing_then_force(tmp_path):
    folder = OutputFolder(tmp_path / "o")
    folder.write_text("a.txt", "first")
    with pytest.raises(OutputExistsError, match="--force"):
        folder.write_text("a.txt", "second")
    assert (tmp_path / "o" / "a.txt").read_text() == "first"
    OutputFolder(tmp_path / "o", force=True).write_text("a.txt", "second")
    assert (tmp_path / "o" / "a.txt").read_text() == "second"


def test_interrupted_write_leaves_nothing(tmp_path):
    folder = OutputFolder(tmp_path)
    with pytest.raises(RuntimeError), folder.atomic_path("b.bin") as temporary:
        temporary.write_bytes(b"half")
        raise RuntimeError("interrupted")
    assert list(tmp_path.iterdir()) == []


def test_json_is_strict():
    text = dumps_json({"x": float("nan"), "y": [float("inf"), 1.5]})
    assert json.loads(text) == {"x": None, "y": [None, 1.5]}


def test_files_get_ordinary_permissions(tmp_path):
    import os

    path = OutputFolder(tmp_path).write_text("c.txt", "x")
    mask = os.umask(0)
    os.umask(mask)
    assert path.stat().st_mode & 0o777 == 0o666 & ~mask
