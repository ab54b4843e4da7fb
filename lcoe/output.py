"""Writing results safely: temporary files renamed into place, never clobbering a user's folder.

An output folder that exists and is not empty is refused unless ``force`` is given. Each file is
written under a temporary name in the same folder and renamed, so a crash never leaves a
half-written file behind under the final name.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Callable
from pathlib import Path

from .errors import InputError

#: File left in every output folder, so that ``lcoe demo`` may refresh its own folder.
MARKER = ".lcoe-output"


class OutputDir:
    """A folder that files are written into atomically.

    Parameters
    ----------
    path : str or pathlib.Path
        Target folder.
    force : bool
        Allow writing into a non-empty folder (files of the same name are replaced).
    replace_own : bool
        Also allow it when the folder was written by lcoe before (it holds :data:`MARKER`).
    """

    def __init__(self, path: str | Path, force: bool = False, replace_own: bool = False):
        self.path = Path(path)
        if self.path.exists() and not self.path.is_dir():
            raise InputError(f"--out {self.path}: exists and is not a folder")
        own = replace_own and (self.path / MARKER).is_file()
        if self.path.is_dir() and any(self.path.iterdir()) and not (force or own):
            raise InputError(f"--out {self.path}: folder is not empty; choose another folder or "
                             f"add --force to replace its files")
        self._staging: Path | None = None

    def __enter__(self) -> OutputDir:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self._staging = Path(tempfile.mkdtemp(prefix=f".{self.path.name}.", dir=self.path.parent))
        return self

    def file(self, name: str) -> Path:
        """Path in the staging folder to write ``name`` to."""
        assert self._staging is not None, "use OutputDir as a context manager"
        return self._staging / name

    def write_text(self, name: str, text: str) -> None:
        self.file(name).write_text(text, encoding="utf-8")

    def write_with(self, name: str, writer: Callable[[Path], None]) -> None:
        """Call ``writer(path)`` to produce ``name``."""
        writer(self.file(name))

    def __exit__(self, exc_type, exc, tb) -> None:
        staging, self._staging = self._staging, None
        try:
            if exc_type is None:
                (staging / MARKER).write_text("written by lcoe\n", encoding="utf-8")
                self.path.mkdir(parents=True, exist_ok=True)
                for f in sorted(staging.iterdir()):
                    os.replace(f, self.path / f.name)
        finally:
            shutil.rmtree(staging, ignore_errors=True)
