"""Safe output folder: nothing is overwritten unless asked, every file appears whole or not at all.

Each file is written under a temporary name in the same folder and renamed into place, so
an interrupted run leaves no half-written result. Inputs are never opened for writing.
"""

from __future__ import annotations

import contextlib
import json
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from agepost.errors import OutputExistsError


class OutputFolder:
    """A folder of results; ``force`` allows replacing files that already exist.

    Parameters
    ----------
    path : str or Path
        Folder to write into; created if missing (parents too).
    force : bool
        Replace existing files of the same name instead of refusing.
    """

    def __init__(self, path: str | os.PathLike[str], *, force: bool = False) -> None:
        self.root = Path(path)
        self.force = force
        if self.root.exists() and not self.root.is_dir():
            raise OutputExistsError(f"{self.root} exists and is not a folder; choose another --out")

    def check_free(self, *names: str) -> None:
        """Raise before any work is done if one of ``names`` exists and ``force`` is off."""
        if self.force:
            return
        taken = [name for name in names if (self.root / name).exists()]
        if taken:
            raise OutputExistsError(
                f"{self.root / taken[0]} already exists; pass --force to replace it "
                "or choose a new --out folder"
            )

    @contextlib.contextmanager
    def atomic_path(self, name: str) -> Iterator[Path]:
        """Yield a temporary path to write ``name`` to; it is renamed into place on success."""
        self.check_free(name)
        self.root.mkdir(parents=True, exist_ok=True)
        target = self.root / name
        handle, temporary = tempfile.mkstemp(
            prefix=f".{target.name}.", suffix=".part", dir=self.root
        )
        os.close(handle)
        try:
            yield Path(temporary)
            os.chmod(temporary, 0o666 & ~_current_umask())  # mkstemp makes 0600 files
            os.replace(temporary, target)
        finally:
            if os.path.exists(temporary):
                os.remove(temporary)

    def write_text(self, name: str, text: str) -> Path:
        """Write a text file atomically; returns its final path."""
        with self.atomic_path(name) as temporary:
            temporary.write_text(text, encoding="utf-8")
        return self.root / name

    def write_bytes(self, name: str, data: bytes) -> Path:
        """Write a binary file atomically; returns its final path."""
        with self.atomic_path(name) as temporary:
            temporary.write_bytes(data)
        return self.root / name

    def write_json(self, name: str, record: Any) -> Path:
        """Write a JSON document (indented, NaN written as null) atomically."""
        return self.write_text(name, dumps_json(record) + "\n")


def _current_umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def dumps_json(record: Any) -> str:
    """JSON text with NaN and infinities replaced by null (strict JSON)."""
    return json.dumps(_strict(record), indent=2, allow_nan=False)


def _strict(value: Any) -> Any:
    if isinstance(value, float):
        return value if value == value and abs(value) != float("inf") else None
    if isinstance(value, dict):
        return {str(k): _strict(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_strict(v) for v in value]
    if hasattr(value, "item") and callable(value.item):  # numpy scalars
        return _strict(value.item())
    return value
