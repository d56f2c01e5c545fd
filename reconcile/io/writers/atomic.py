"""Write a set of files so that either all of them land or none does.

Each file is written to a hidden temporary name in its final directory; only when every one has
been written are they renamed into place (a rename within one directory is atomic on POSIX and
Windows). A failure before that point removes the temporaries and leaves earlier results untouched.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
import tempfile
from collections.abc import Callable, Iterable, Iterator, Sequence
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

from reconcile.errors import OutputError

Writer = Callable[[Path], None]

#: The files this run reads; no file set may write over one of them (see :func:`protecting`).
_PROTECTED: contextvars.ContextVar[frozenset[Path]] = contextvars.ContextVar(
    "protected", default=frozenset()
)


@contextlib.contextmanager
def protecting(inputs: Iterable[Path]) -> Iterator[None]:
    """While inside, writing a file that is one of ``inputs`` is an :class:`OutputError`: a slip
    of the output name must never replace the broker file the run is reconciling."""
    token = _PROTECTED.set(frozenset(_resolved(path) for path in inputs))
    try:
        yield
    finally:
        _PROTECTED.reset(token)


def check_not_an_input(target: Path, option: str | None = None) -> None:
    if _resolved(target) in _PROTECTED.get():
        named = f"{option} {target}" if option else f"{target} (to be written)"
        raise OutputError(
            f"{named}: expected a path that is not one of this run's inputs, found the input "
            "itself; nothing was written"
        )


def _resolved(path: Path) -> Path:
    return Path(os.path.realpath(path))


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
        """Write one file under a temporary name; a failure to write (no permission, a full disk)
        is an :class:`OutputError` naming the file, and the set is discarded by :func:`file_set`."""
        target = self.directory / name
        check_not_an_input(target)
        try:
            handle, temporary = tempfile.mkstemp(
                prefix=f".{name}.", suffix=".partial", dir=self.directory
            )
            os.close(handle)
            staged = Path(temporary)
            self._staged.append((staged, target))
            staged.chmod(_CREATE_MODE)  # mkstemp makes files owner-only; results are ordinary
            write(staged)
        except OSError as exc:
            reason = exc.strerror or str(exc)
            raise OutputError(f"{target}: cannot write results: {reason}") from exc
        return target

    def add_all(self, writers: Sequence[tuple[str, Writer]], threads: int = 1) -> list[Path]:
        """:meth:`add` for several files, written by up to ``threads`` threads at once (for
        writers that release the GIL, as pyarrow's do); the first failure is raised."""
        if threads <= 1 or len(writers) <= 1:
            return [self.add(name, write) for name, write in writers]
        with ThreadPoolExecutor(max_workers=threads) as pool:
            # Each task runs in a copy of this context, so the run's protected inputs hold there.
            futures = [
                pool.submit(contextvars.copy_context().run, self.add, name, write)
                for name, write in writers
            ]
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
