"""Write a set of files so that either all of them land or none does.

Each file is written to a hidden temporary name in its final directory; only when every one has
been written are they renamed into place (a rename within one directory is atomic on POSIX and
Windows). A failure before that point removes the temporaries and leaves earlier results untouched.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

from reconcile.errors import OutputError

Writer = Callable[[Path], None]


def _umask() -> int:
    current = os.umask(0)
    os.umask(current)
    return current


#: The mode an ordinary ``open(path, "w")`` would give a new file.
_CREATE_MODE = 0o666 & ~_umask()


class FileSet:
    """Collects writers for several files, then publishes them together."""

    def __init__(self, directory: Path) -> None:
        self.directory = directory
        self._staged: list[tuple[Path, Path]] = []

    def add(self, name: str, write: Writer) -> Path:
        target = self.directory / name
        handle, temporary = tempfile.mkstemp(
            prefix=f".{name}.", suffix=".partial", dir=self.directory
        )
        os.close(handle)
        staged = Path(temporary)
        staged.chmod(_CREATE_MODE)  # mkstemp makes files owner-only; results are ordinary files
        self._staged.append((staged, target))
        write(staged)
        return target

    def add_all(self, writers: Sequence[tuple[str, Writer]], threads: int = 1) -> list[Path]:
        """:meth:`add` for several files, written by up to ``threads`` threads at once (for
        writers that release the GIL, as pyarrow's do); the first failure is raised."""
        if threads <= 1 or len(writers) <= 1:
            return [self.add(name, write) for name, write in writers]
        with ThreadPoolExecutor(max_workers=threads) as pool:
            futures = [pool.submit(self.add, name, write) for name, write in writers]
            return [future.result() for future in futures]

    def publish(self) -> list[Path]:
        for staged, target in self._staged:
            staged.replace(target)
        published = [target for _, target in self._staged]
        self._staged.clear()
        return published

    def discard(self) -> None:
        for staged, _ in self._staged:
            with contextlib.suppress(FileNotFoundError):
                staged.unlink()
        self._staged.clear()


@contextlib.contextmanager
def file_set(directory: Path | str) -> Iterator[FileSet]:
    """``with file_set(out) as files: files.add(name, writer)``; all land at the end, or none."""
    directory = Path(directory)
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{directory}: cannot create the output directory: {exc}") from exc
    files = FileSet(directory)
    try:
        yield files
    except BaseException:
        files.discard()
        raise
    try:
        files.publish()
    except OSError as exc:
        files.discard()
        raise OutputError(f"{directory}: cannot write results: {exc}") from exc
