"""All-or-nothing output sets and the output-folder lock.

An :class:`OutputSet` is what one command writes.  Its rules:

1. every target is checked before the first byte is written (:meth:`OutputSet.add`): not the
   input (nor a link to it), not a folder, a file name the file system accepts, two targets
   not the same file, an existing file only with ``--force``;
2. every output is written to a hidden temporary file (``.<name>.<random>.part<suffix>``) in
   the output folder; any ``OSError`` (full disk, file-size limit, permissions) becomes an
   :class:`~framebuckle.errors.OutputError` and every temporary file is removed;
3. only when all are written are they renamed into place, one after the other; a replaced file
   is first hard-linked to a hidden backup, so when a later rename fails (or the run is
   interrupted between renames) the renamed ones are put back (old file restored, new one
   removed) and nothing of the run remains.  Only a SIGKILL between two renames can leave a
   mixed set (each file still either old and complete or new and complete).

:func:`folder_lock` is held by a CLI command for its whole run: ``<out>/.framebuckle.lock``,
created with ``O_EXCL``, holding ``pid host start-time``.  A second run into the same folder is
refused while the first holds it; with ``--force`` it waits for the lock instead.  A lock whose
process has ended (same host; pid gone or reused by another process) is stale and is taken over;
the temporary files and backups the ended run left in the folder (:data:`DEBRIS`) are removed then.
"""

from __future__ import annotations

import os
import re
import socket
import sys
import tempfile
import time
from contextlib import contextmanager
from pathlib import Path

from ..errors import OutputError


#: Test hook (used only by tests/test_nothing_lost.py): when this environment variable names a
#: file, every atomic write, after writing its temporary file and before renaming it into place,
#: writes "<temporary path>\n<target path>" to that file and waits until the file is removed.
#: A test can thus kill the process at a known point of a write.
PAUSE_ENV = "FRAMEBUCKLE_TEST_PAUSE_FILE"


def _pause_hook(tmp: Path, target: Path):
    flag = os.environ.get(PAUSE_ENV)
    if not flag:
        return
    import time
    Path(flag).write_text(f"{tmp}\n{target}\n")
    while os.path.exists(flag):
        time.sleep(0.02)


LOCK_NAME = ".framebuckle.lock"
#: lock files with no readable owner older than this [s] are stale (a run killed while creating it)
EMPTY_LOCK_STALE = 10.0


def os_message(exc: OSError) -> str:
    """A short reason of an OSError, with the full-disk cases spelled out."""
    import errno
    code = getattr(exc, "errno", None)
    if code == errno.ENOSPC:
        return "no space left on the device"
    if code == errno.EFBIG:
        return "file too large (disk quota or file-size limit reached)"
    if code == errno.EDQUOT:
        return "disk quota exceeded"
    return exc.strerror or str(exc)


def name_max(folder: Path) -> int:
    try:
        return int(os.pathconf(folder, "PC_NAME_MAX"))
    except (OSError, ValueError, AttributeError):
        return 255


def _same_file(a: Path, b: Path) -> bool:
    try:
        if a.resolve() == b.resolve():
            return True
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def check_target(target: Path, force: bool, protect=()) -> None:
    """Refuse a target that must not (or cannot) be written; raises OutputError."""
    target = Path(target)
    for p in protect:
        if _same_file(Path(p), target):
            raise OutputError(f"refusing to overwrite the input file {p} (the output is the input "
                              f"or a link to it); choose another --out", source=str(target))
    n = len(target.name.encode("utf-8", "surrogateescape"))
    limit = name_max(target.parent) - 16      # room for the temporary file's name
    if n > limit:
        raise OutputError(f"output file name is {n} bytes long, more than the {limit} this folder "
                          f"allows (with room for the temporary file); use a shorter input name "
                          f"or case name", source=str(target))
    if target.is_dir():
        raise OutputError("an output name is taken by a folder; move it or choose another --out",
                          source=str(target))
    if (target.exists() or target.is_symlink()) and not force:
        raise OutputError("output exists; use --force to replace it", source=str(target))


def _tmp_for(target: Path) -> Path:
    stem = target.name[:40]
    fd, tmp = tempfile.mkstemp(prefix=f".{stem}.", suffix=".part" + target.suffix[:8],
                               dir=target.parent)
    os.close(fd)
    _default_mode(tmp)
    return Path(tmp)


def _default_mode(path):
    """Give a new output the permissions of a normally created file (mkstemp makes it 0600)."""
    mask = os.umask(0o22)
    os.umask(mask)
    try:
        os.chmod(path, 0o666 & ~mask)
    except OSError:
        pass


class OutputSet:
    """Outputs written together: ``add`` all targets, ``write`` each, ``commit`` once.

    Use as a context manager: leaving it with an exception (or without ``commit``) removes
    every temporary file.
    """

    def __init__(self, force: bool = True, protect=()):
        self.force = force
        self.protect = [Path(p) for p in protect]
        self.targets: list[Path] = []
        self.tmps: dict[Path, Path] = {}

    def add(self, target) -> Path:
        target = Path(target)
        for t in self.targets:
            if t.name == target.name and _same_file(t.parent, target.parent):
                raise OutputError("two outputs of this run have the same name", source=str(target))
        check_target(target, self.force, self.protect)
        self.targets.append(target)
        return target

    def add_all(self, targets):
        for t in targets:
            self.add(t)
        return self

    def write(self, target, writer) -> Path:
        """Call ``writer(tmp_path)``; an OSError becomes an OutputError naming the target."""
        target = Path(target)
        if target not in self.targets:
            self.add(target)
        try:
            tmp = _tmp_for(target)
        except OSError as exc:
            raise OutputError(f"cannot write in the output folder: {os_message(exc)}",
                              source=str(target.parent)) from None
        self.tmps[target] = tmp
        try:
            writer(tmp)
        except OSError as exc:
            raise OutputError(f"cannot write the output: {os_message(exc)}; nothing was written",
                              source=str(target)) from None
        return target

    def write_bytes(self, target, data: bytes) -> Path:
        return self.write(target, lambda tmp: _write_all(tmp, data))

    def write_text(self, target, text: str) -> Path:
        return self.write_bytes(target, text.encode("utf-8"))

    def commit(self) -> list[Path]:
        """Rename every temporary file into place; on any failure put everything back."""
        missing = [t for t in self.targets if t not in self.tmps]
        if missing:
            raise RuntimeError(f"outputs planned but not written: {missing}")
        done: list[tuple[Path, Path | None]] = []    # (target, backup of the replaced file)
        try:
            for target in self.targets:
                tmp = self.tmps[target]
                _pause_hook(tmp, target)
                if target.is_dir():
                    raise OutputError("an output name is taken by a folder; move it or choose "
                                      "another --out", source=str(target))
                backup = _backup(target)
                try:
                    os.replace(tmp, target)
                except OSError as exc:
                    _unlink(backup)
                    raise OutputError(f"cannot write the output: {os_message(exc)}; nothing was "
                                      f"written", source=str(target)) from None
                done.append((target, backup))
                del self.tmps[target]
        except BaseException:
            for target, backup in reversed(done):
                try:
                    if backup is not None:
                        os.replace(backup, target)
                    else:
                        os.unlink(target)
                except OSError:
                    pass
            raise
        for _, backup in done:
            _unlink(backup)
        return list(self.targets)

    def discard(self):
        for tmp in self.tmps.values():
            _unlink(tmp)
        self.tmps.clear()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.discard()
        return False


def _write_all(path: Path, data: bytes):
    with open(path, "wb") as f:
        f.write(data)
        f.flush()


def _backup(target: Path) -> Path | None:
    """A hidden hard link to the file about to be replaced (None: nothing to keep or no links)."""
    if not target.is_file() or target.is_symlink():
        return None
    for _ in range(5):
        name = target.parent / f".{target.name[:40]}.{os.urandom(4).hex()}.old"
        try:
            os.link(target, name)
            return name
        except FileExistsError:
            continue
        except OSError:
            return None
    return None


#: names of the temporary files and backups of an OutputSet (``.<name>.<8 chars>.part<suffix>``,
#: ``.<name>.<8 hex>.old``)
DEBRIS = re.compile(r"^\..+\.[a-z0-9_]{8}\.part(\.[^.]*)?$|^\..+\.[0-9a-f]{8}\.old$")


def remove_debris(folder: Path) -> list[str]:
    """Remove the temporary files and backups a killed run left (called on a stale lock only)."""
    gone = []
    try:
        entries = list(Path(folder).iterdir())
    except OSError:
        return gone
    for e in entries:
        if DEBRIS.match(e.name) and e.is_file() and not e.is_symlink():
            _unlink(e)
            gone.append(e.name)
    return gone


def _unlink(p):
    if p is None:
        return
    try:
        os.unlink(p)
    except OSError:
        pass


# ---------------------------------------------------------------- folder lock


def _start_time(pid: int) -> str:
    """The process start time (Linux clock ticks since boot) or '' where unknown."""
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
        return stat.rsplit(")", 1)[1].split()[19]
    except (OSError, IndexError):
        return ""


def _owner_alive(text: str) -> bool | None:
    """True/False for a lock of this host; None when it cannot tell (other host, unreadable)."""
    parts = text.split()
    if len(parts) < 2 or not parts[0].isdigit():
        return None
    pid, host = int(parts[0]), parts[1]
    if host != socket.gethostname():
        return None
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        pass
    started = parts[2] if len(parts) > 2 else ""
    now = _start_time(pid)
    return not (started and now and started != now)


_HELD: dict[str, int] = {}


def make_dir(out: Path) -> Path:
    """Create the output folder ``out`` (and its parents); every ``OSError`` an ``OutputError``."""
    out = Path(out)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create the output folder: {os_message(exc)}", source=str(out)) from None
    if not out.is_dir():
        raise OutputError("the output folder is not a folder", source=str(out))
    return out


@contextmanager
def folder_lock(out, force: bool = False, wait_note=None):
    """Hold ``<out>/.framebuckle.lock`` (creating ``out``); see the module docstring.

    Removes ``out`` again on the way out when this call created it and it stayed empty.
    """
    out = Path(out)
    created = not out.exists()
    make_dir(out)
    key = str(out.resolve())
    if key in _HELD:              # re-entrant within one process
        _HELD[key] += 1
        try:
            yield out
        finally:
            _HELD[key] -= 1
        return
    lock = out / LOCK_NAME
    _acquire(lock, force, wait_note)
    _HELD[key] = 1
    try:
        yield out
    finally:
        del _HELD[key]
        _unlink(lock)
        if created:
            try:
                out.rmdir()          # only when empty
            except OSError:
                pass


def _acquire(lock: Path, force: bool, wait_note):
    me = f"{os.getpid()} {socket.gethostname()} {_start_time(os.getpid())}\n"
    noted = False
    while True:
        try:
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            pass
        except OSError as exc:
            raise OutputError(f"cannot create the lock file: {os_message(exc)}", source=str(lock)) from None
        else:
            try:
                os.write(fd, me.encode())
            except OSError as exc:
                os.close(fd)
                _unlink(lock)
                raise OutputError(f"cannot write the lock file: {os_message(exc)}", source=str(lock)) from None
            os.close(fd)
            return
        try:
            text = lock.read_text()
            age = time.time() - lock.stat().st_mtime
        except FileNotFoundError:
            continue                 # released meanwhile: try again
        except OSError:
            text, age = "", 0.0
        alive = _owner_alive(text)
        if alive is False or (not text.strip() and age > EMPTY_LOCK_STALE):
            _unlink(lock)            # stale: its run has ended without removing it
            remove_debris(lock.parent)
            continue
        who = f"pid {text.split()[0]} on {text.split()[1]}" if len(text.split()) >= 2 else "another run"
        if not force:
            raise OutputError(f"another framebuckle run ({who}) is writing into this folder; wait "
                              f"for it to end or use --force to wait and then replace its outputs "
                              f"(a lock left by a run on another machine that ended: delete "
                              f"{LOCK_NAME})", source=str(lock.parent))
        if not noted:
            print(f"framebuckle: waiting for the run ({who}) that holds {lock}", file=wait_note or sys.stderr)
            noted = True
        time.sleep(0.2)
