"""Result files: each written atomically, a run's files written as a set, and text made safe to
show.

- :func:`write_atomic` writes one file through a temporary file in the same folder and a rename,
  so that no reader ever sees it half-written; the file gets the mode a plain ``open()`` would
  give (``0o666`` less the user's umask), whatever it holds (JSON, Markdown, CSV, PNG).
- :class:`OutputSet` is the output folder of one run (``--out``): it is checked before any
  computation, the run writes into a staging folder, and :meth:`OutputSet.commit` moves the whole
  set into place at the end, so that the folder never mixes two runs and a run killed midway
  leaves the previous complete set (or nothing new). The scheme is in its docstring.
- :func:`safe_text` escapes control characters and cuts long text, for anything a user typed
  that reaches the console or a report.
"""
import json
import os
import re
import shutil
import tempfile
import threading
import time
from fnmatch import fnmatchcase
from pathlib import Path

#: Longest message the command line prints for one error [characters].
MESSAGE_LIMIT = 2000

#: Name of the temporary files of :func:`write_atomic`: ``.<name>.<8 random characters>.tmp``
#: (:func:`tempfile.mkstemp`).
TEMPORARY_FILE = re.compile(r"^\..+\.[A-Za-z0-9_]{8}\.tmp$")

#: Staging folders of :class:`OutputSet`: ``.blownwing-run-<pid>-<8 random>`` inside an existing
#: output folder, ``.<name>.blownwing-run-<pid>-<8 random>`` beside a folder not yet created.
STAGE = re.compile(r"^\.(?:(?P<name>.+)\.)?blownwing-run-(?P<pid>\d+)-[A-Za-z0-9_]{8}$")

#: The journal mark of a staging folder whose set is complete: from then on the set is moved
#: into place, by this run or, if it is killed, by the next run into the same folder.
COMPLETE = ".complete"

_umask_lock = threading.Lock()
_umask_cache = []


def user_umask():
    """The process's umask, without changing it where the system can tell (Linux
    ``/proc/self/status``); elsewhere read once by setting and restoring it."""
    try:
        with open("/proc/self/status", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    with _umask_lock:
        if not _umask_cache:
            old = os.umask(0o077)
            os.umask(old)
            _umask_cache.append(old)
        return _umask_cache[0]


def file_mode():
    """The mode of a new file under the user's umask: ``0o666 & ~umask``."""
    return 0o666 & ~user_umask()


def write_atomic(path, data):
    """Write ``data`` to ``path`` through a temporary file in the same folder, then rename.

    The file gets the mode ``0o666 & ~umask`` (as ``open()`` would give; the temporary file of
    :func:`tempfile.mkstemp` is ``0o600``). A temporary file left by a killed process matches
    :data:`TEMPORARY_FILE` and is removed by the next :class:`OutputSet` on that folder.

    Parameters
    ----------
    path : str or Path
        Target file; its folder is created if needed.
    data : str, bytes or callable
        Text (UTF-8), bytes, or a function that writes to a binary file handle (e.g. a
        matplotlib ``savefig``).
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            if callable(data):
                data(handle)
            else:
                handle.write(data.encode("utf-8") if isinstance(data, str) else data)
        os.chmod(tmp, file_mode())
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def write_json(path, data):
    """Write JSON atomically; NaN and infinities become null, NumPy values plain numbers."""
    write_atomic(path, json.dumps(_clean(data), indent=2) + "\n")


def _clean(obj):
    if isinstance(obj, float):
        return obj if obj == obj and abs(obj) != float("inf") else None
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if hasattr(obj, "tolist"):
        return _clean(obj.tolist())
    if hasattr(obj, "as_dict"):     # a lift table: {lift_coefficient: [...], value: [...]}
        return _clean(obj.as_dict())
    return obj


# --- text ---------------------------------------------------------------------------------------
def safe_text(text, limit=MESSAGE_LIMIT, newlines=True):
    """``text`` fit to show: non-printable characters escaped, cut at ``limit`` characters.

    Control characters (terminal escape codes, carriage returns, NUL, bidirectional overrides,
    undecodable bytes kept as surrogates) are written as Python escapes (``\\x1b``, ``\\r``,
    ``\\u202e``); newlines are kept when ``newlines`` is true, escaped otherwise. Text longer
    than ``limit`` ends with ``... [N more characters]``.

    Parameters
    ----------
    text : object
        Converted with ``str``.
    limit : int
        Longest result kept, before the note of how much was cut [characters].
    newlines : bool
        Keep ``\\n`` (a message of a few lines) or escape it (one line: a title, a table cell).

    Returns
    -------
    str
    """
    text = str(text)
    total = len(text)
    escaped = "".join(ch if ch.isprintable() or (newlines and ch == "\n")
                      else ch.encode("unicode_escape", "backslashreplace").decode("ascii")
                      for ch in text[:limit])
    if total <= limit and len(escaped) <= limit:
        return escaped
    return escaped[:limit] + f"... [cut: {total} characters in all]"


# --- a run's output folder ----------------------------------------------------------------------
class OutputError(ValueError):
    """The output folder cannot be used (named in the message with the option)."""


class OutputSet:
    """The output folder of one run, written as a set.

    Scheme:

    1. :meth:`open` (before any computation) checks the path (no NUL, not too long, not a file,
       writable) by creating the run's staging folder; it first cleans what killed runs left:
       :func:`write_atomic` temporary files older than this run, staging folders of processes
       that no longer run (a complete one is finished, any other removed).
    2. The run writes its files into :attr:`path` (the staging folder), each with
       :func:`write_atomic`.
    3. :meth:`commit`: when the output folder does not exist yet, the staging folder is renamed
       to it in one step (atomic: the folder appears whole or not at all). When it exists, the
       staging folder is marked complete (:data:`COMPLETE`, a journal naming the command's
       output patterns), each file is renamed into place, the files of the command's own output
       patterns that this run did not write (another case's
       ``break_even_slot_ratio_vs_extra_loss.png``) are removed,
       and the staging folder goes; if the run is killed during those renames (milliseconds),
       the next run into the folder finishes them before it starts. Other files in the folder
       are never touched.
    4. On an error or interruption (:meth:`discard`, or leaving the ``with`` block by an
       exception) the staging folder is removed: the folder keeps its previous set.

    Parameters
    ----------
    target : str or path-like
        The output folder.
    patterns : sequence of str
        Shell patterns (:func:`fnmatch.fnmatchcase`) of every file the command can write there:
        old files matching them and not written by this run are removed at commit.
    option : str
        The command-line option named in error messages.
    """

    def __init__(self, target, patterns, option="--out"):
        self.option = option
        self.patterns = tuple(patterns)
        self.started = time.time()
        self.target = self._checked_path(target)
        self.shown = Path(self.target_text)      # as the user wrote it, for messages
        self.path = None
        self._stage = None
        self._whole = None        # the folder the staging folder becomes by one rename, if any
        self.committed = []

    def __enter__(self):
        if self.path is None:
            self.open()
        return self

    def __exit__(self, kind, value, trace):
        if self.path is not None and not self.committed:
            self.discard()
        return False

    def _fail(self, what):
        raise OutputError(f"{self.option} {safe_text(os.fspath(self.target_text), 300, False)}: "
                          f"{what}")

    def _checked_path(self, target):
        text = os.fspath(target)
        self.target_text = text
        if isinstance(text, bytes):
            text = os.fsdecode(text)
            self.target_text = text
        if "\0" in text:
            self._fail("the path contains a NUL character")
        if not text.strip():
            self._fail("the path is empty")
        path = Path(os.path.abspath(text))      # ".." resolved by name, as the shell shows it
        try:
            name_max = os.pathconf(path.anchor or "/", "PC_NAME_MAX")
            path_max = os.pathconf(path.anchor or "/", "PC_PATH_MAX")
        except (OSError, ValueError, AttributeError):
            name_max, path_max = 255, 4096
        if len(os.fsencode(str(path))) >= path_max:
            self._fail(f"the path is too long ({len(str(path))} characters; at most "
                       f"{path_max - 1})")
        longest = max((len(os.fsencode(p)) for p in path.parts[1:]), default=0)
        if longest > name_max:
            self._fail(f"a folder name is too long ({longest} bytes; at most {name_max})")
        self._name_max = name_max
        return path

    def open(self):
        """Check the folder, clean what killed runs left and create the staging folder.

        Raises
        ------
        OutputError
            The folder cannot be used: its path names a file, is not writable, ...
        """
        target = self.target
        anchor, missing = target, None
        try:
            while not os.path.lexists(anchor):
                anchor, missing = anchor.parent, anchor
            if not anchor.is_dir():
                self._fail("not a folder" if missing is None else
                           f"{safe_text(anchor, 300, False)} is not a folder")
            # a staging folder beside a missing folder adds ".blownwing-run-<pid>-<8>" to its name
            if missing is not None and len(os.fsencode(missing.name)) > self._name_max - 40:
                self._fail(f"the folder name {safe_text(missing.name, 80, False)!r} is too long "
                           f"for a new folder (at most {self._name_max - 40} bytes)")
            beside = (missing.parent, missing.name) if missing else (target.parent, target.name)
            if missing is None:
                self._recover(target, "")
            if os.path.isdir(beside[0]):
                self._recover(beside[0], beside[1])
            if missing is None:
                self._stage = Path(tempfile.mkdtemp(prefix=f".blownwing-run-{os.getpid()}-",
                                                    dir=target))
                self.path = self._stage
            else:
                self._stage = Path(tempfile.mkdtemp(
                    prefix=f".{missing.name}.blownwing-run-{os.getpid()}-", dir=missing.parent))
                self._whole = missing
                self.path = self._stage / target.relative_to(missing)
                self.path.mkdir(parents=True, exist_ok=True)
        except OutputError:
            raise
        except OSError as exc:
            self.discard()
            self._fail(f"cannot write there: {exc.strerror or exc}")
        return self

    def final(self, path):
        """Where a file written under :attr:`path` will be after :meth:`commit`."""
        return self.shown / Path(path).relative_to(self.path)

    def commit(self):
        """Move the run's files into place as a set; returns their final paths (sorted)."""
        stage, target = self._stage, self.target
        names = sorted(p.name for p in self.path.iterdir())
        dir_mode = 0o777 & ~user_umask()
        if self._whole is not None:
            for folder in [stage] + [p for p in stage.rglob("*") if p.is_dir()]:
                os.chmod(folder, dir_mode)
            try:
                os.rename(stage, self._whole)
                self._stage = None
                self.committed = [target / n for n in names]
                return self.committed
            except OSError:       # the folder appeared meanwhile: file by file below
                target.mkdir(parents=True, exist_ok=True)
        write_atomic(self.path / COMPLETE, json.dumps({"patterns": list(self.patterns)}))
        _finish(self.path, target, self.patterns)
        if self.path != stage:
            shutil.rmtree(stage, ignore_errors=True)
        self._stage = None
        self.committed = [target / n for n in names]
        return self.committed

    def discard(self):
        """Remove the staging folder: nothing of this run is left."""
        if self._stage is not None:
            shutil.rmtree(self._stage, ignore_errors=True)
            self._stage = None

    def _recover(self, folder, name):
        """Clean ``folder`` of what killed runs left: stale temporary files (only inside the
        output folder, ``name == ""``) and the staging folders named for ``name``."""
        for entry in os.scandir(folder):
            if not name and TEMPORARY_FILE.match(entry.name) and entry.is_file(
                    follow_symlinks=False):
                try:
                    if entry.stat(follow_symlinks=False).st_mtime < self.started:
                        os.unlink(entry.path)
                except OSError:
                    pass
                continue
            m = STAGE.match(entry.name)
            if not m or (m.group("name") or "") != name or not entry.is_dir(follow_symlinks=False):
                continue
            if _running(int(m.group("pid"))):
                continue
            stage = Path(entry.path)
            mark = stage / COMPLETE
            try:
                if not name and mark.is_file():
                    patterns = json.loads(mark.read_text(encoding="utf-8"))["patterns"]
                    _finish(stage, Path(folder), [str(p) for p in patterns])
            except (OSError, ValueError, KeyError, TypeError):
                pass
            shutil.rmtree(stage, ignore_errors=True)


def _running(pid):
    """Whether process ``pid`` (the owner of a staging folder) still runs."""
    if pid == os.getpid():
        return True
    if os.name != "posix":
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


def _finish(stage, target, patterns):
    """Move a complete staging folder's files into ``target``, then remove the files of
    ``patterns`` it did not hold, then the staging folder."""
    names = {p.name for p in stage.iterdir() if p.name != COMPLETE}
    for n in sorted(names):
        os.replace(stage / n, target / n)
    for entry in os.scandir(target):
        if (entry.name not in names and any(fnmatchcase(entry.name, p) for p in patterns)
                and entry.is_file(follow_symlinks=False)):
            os.unlink(entry.path)
    shutil.rmtree(stage, ignore_errors=True)
