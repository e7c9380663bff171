"""Write a run's outputs all together or not at all.

Files are first written into a hidden staging folder inside the output folder (same file
system, so the final moves are renames). Only when every output is complete are they
moved into place, one rename each; on any error or interruption the staging folder is
removed and the output folder is left as it was. A hard kill (SIGKILL, power loss) can
leave a hidden ``.agepost-staging-*`` folder behind, never a half-written result.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

from agepost.outputs import OutputFolder


@contextlib.contextmanager
def staged_outputs(folder: OutputFolder, names: list[str]) -> Iterator[OutputFolder]:
    """Yield an :class:`OutputFolder` to write ``names`` into; they appear in ``folder`` at the end.

    Raises
    ------
    OutputExistsError
        Before anything is written, if a name exists and ``folder.force`` is off.
    """
    folder.check_free(*names)
    folder.root.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=".agepost-staging-", dir=folder.root))
    try:
        yield OutputFolder(staging, force=True)
        missing = [name for name in names if not (staging / name).exists()]
        if missing:
            raise FileNotFoundError(f"staged outputs not written: {', '.join(missing)}")
        folder.check_free(*names)  # nothing appeared meanwhile (another run into this folder)
        for name in names:
            os.replace(staging / name, folder.root / name)
    finally:
        shutil.rmtree(staging, ignore_errors=True)
