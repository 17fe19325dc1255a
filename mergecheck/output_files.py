"""Writing a run's output files: every file whole, all of them or none, and only where a file belongs.

Rules (each broken rule is an :class:`InputError` naming the option and the path, raised before anything
is written):

- an output is a regular file, new or existing: a folder, a named pipe, a device or a socket is refused;
- an output is never one of the run's input files, and two outputs never name the same file;
- a symbolic link is followed knowingly: the file it points to is replaced and the link stays a link;
- an existing file without write permission is refused (even for a user, such as root, whom the
  system would let write it); an existing file keeps its permission bits (and, where allowed, its owner).

Every file is first written in full to a temporary file beside its target; only when all are written are
they renamed over their targets (an atomic rename each, POSIX ``rename(2)``), so a failure part way
(a full disk, a read-only folder) leaves every target as it was.
"""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError

_KINDS = (
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISFIFO, "a named pipe"),
    (stat.S_ISCHR, "a device"),
    (stat.S_ISBLK, "a device"),
    (stat.S_ISSOCK, "a socket"),
)


@dataclass(frozen=True, slots=True)
class Output:
    """One file a run writes: the option that named it, the path as given, and the text (or its pieces in turn,
    for a document too large to hold whole)."""

    option: str
    path: str
    text: str | bytes | Iterable[str] = ""


def _target(option: str, path: str) -> Path:
    """The file a path finally names (symbolic links followed), checked against the rules above."""
    try:
        target = Path(path).resolve(strict=False)
    except (OSError, RuntimeError) as error:  # a loop of symbolic links
        raise InputError("command line", option, f"{path}: cannot follow this path ({error})") from None
    try:
        status = target.stat()
    except FileNotFoundError:
        if not target.parent.is_dir():
            raise InputError("command line", option, f"{path}: the folder for this output does not exist") from None
        return target
    except OSError as error:
        raise InputError("command line", option, f"{path}: cannot use this output ({error.strerror})") from None
    for test, kind in _KINDS:
        if test(status.st_mode):
            raise InputError("command line", option, f"{path} is {kind}: an output must be a regular file")
    if not status.st_mode & 0o222 or not os.access(target, os.W_OK):
        raise InputError("command line", option, f"{path} is read-only: it is left as it is")
    return target


def check_outputs(outputs: Sequence[Output], inputs: Iterable[str | Path] = ()) -> list[Path]:
    """The target of each output (``-``, standard output, excluded), or :class:`InputError` for a broken rule.

    Call it before the work, so that a bad path is refused at once, and again (by :func:`write_all`) at
    the end.
    """
    read: set[tuple[int, int]] | None = None  # the inputs' files, looked up only if an output already exists
    seen: dict[Path, str] = {}
    targets = []
    for output in outputs:
        if output.path == "-":
            continue
        target = _target(output.option, output.path)
        if target.exists():
            read = _identities(inputs) if read is None else read
            status = target.stat()
            if (status.st_dev, status.st_ino) in read:
                raise InputError(
                    "command line", output.option, f"{output.path} is an input of this run: not overwritten"
                )
        if target in seen:
            raise InputError("command line", output.option, f"{output.path} is also the output of {seen[target]}")
        seen[target] = output.option
        targets.append(target)
    return targets


def _identities(paths: Iterable[str | Path]) -> set[tuple[int, int]]:
    """Device and inode of each file that exists (symbolic links followed): one file under any name."""
    found = set()
    for path in paths:
        with contextlib.suppress(OSError):
            status = os.stat(path)
            found.add((status.st_dev, status.st_ino))
    return found


def write_all(outputs: Sequence[Output], inputs: Iterable[str | Path] = ()) -> None:
    """Write every output file whole, or none of them (see the module docstring)."""
    files = [o for o in outputs if o.path != "-"]
    targets = check_outputs(files, inputs)
    staged: list[tuple[str, Path]] = []
    current = files[0] if files else None
    try:
        for output, target in zip(files, targets, strict=True):
            current = output
            staged.append((_stage(output, target), target))
        for (temporary, target), output in zip(staged, files, strict=True):
            current = output
            os.replace(temporary, target)
    except OSError as error:
        assert current is not None
        raise InputError("command line", current.option, f"{current.path}: cannot write ({error.strerror})") from None
    finally:
        for temporary, _ in staged:
            Path(temporary).unlink(missing_ok=True)


def _stage(output: Output, target: Path) -> str:
    """The output written in full to a temporary file beside its target, with the target's permissions."""
    handle, temporary = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".part")
    try:
        if isinstance(output.text, bytes):
            with os.fdopen(handle, "wb") as binary:
                binary.write(output.text)
        else:
            with os.fdopen(handle, "w", encoding="utf-8") as stream:
                if isinstance(output.text, str):
                    stream.write(output.text)
                else:
                    stream.writelines(output.text)
        try:
            existing = target.stat()
        except FileNotFoundError:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(temporary, 0o666 & ~umask)  # the permissions of a file written the ordinary way
        else:
            os.chmod(temporary, stat.S_IMODE(existing.st_mode))
            with contextlib.suppress(PermissionError):  # only a privileged user may give a file away
                os.chown(temporary, existing.st_uid, existing.st_gid)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return temporary
