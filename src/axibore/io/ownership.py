"""Which files in an output folder axibore wrote, and the one rule for replacing a folder.

Every command that writes a folder (run, mesh, sweep, gridstudy, compare, verify, report) leaves a
manifest in it: the kind of output, each file it wrote with its SHA-256, and, while the folder is
still being written, the host and process. The rule:

* a folder may be replaced only when it is the same kind of output and holds nothing but the files
  of its manifest, unchanged (a sub-folder with a manifest of its own is judged by that one);
* otherwise the command is refused before any work, naming what is foreign;
* ``--force`` writes beside the foreign files: it deletes only the files of the manifest that are
  unchanged, never a file the tool did not write or one changed since;
* a partial folder left by a killed process is removed only when its manifest names this host and
  a process that no longer runs.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import socket
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

from ..version import __version__

try:
    import fcntl
except ImportError:  # pragma: no cover - not on Linux or macOS
    fcntl = None

MANIFEST = ".axibore-manifest.json"
# A file being written by an axibore process (``files.atomic_file``'s temporaries, the manifest's) carries
# ".inflight-<pid>." in its name. While that process lives, such a file does not make a claim refuse the
# folder (two sweeps sharing a folder refused on each other's temporaries); it still counts as foreign,
# so it is never replaced or deleted (a user's file of such a name included), and a folder holding one
# is written beside it, not replaced whole. A dead writer's leftover refuses like any foreign file.
IN_FLIGHT = re.compile(r"\.inflight-(\d+)\.")


@contextmanager
def folder_lock(folder: str | Path):
    """Hold the folder's lock (an advisory flock on the folder itself, no file; none where the system has
    no flock), held while a writer puts a file in place and records it, and while a claim looks:
    between a file's rename into place and its line in the manifest, the file looks foreign or changed
    to another process that looks at the folder (two sweeps sharing a folder refused on each other's
    fresh sweep.csv)."""
    folder = Path(os.path.realpath(folder))
    if fcntl is None or folder in _HELD:  # re-entered in this process: already held
        _HELD[folder] = _HELD.get(folder, 0) + 1
        try:
            yield
        finally:
            _HELD[folder] -= 1
            if not _HELD[folder]:
                del _HELD[folder]
        return
    folder.mkdir(parents=True, exist_ok=True)
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # a folder this process cannot open: no lock (its writes fail on their own terms)
        fd = None
    locked = False
    if fd is not None:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX)
            locked = True
        except OSError:  # a file system without locks: the writers go on as before
            pass
    _HELD[folder] = 1
    try:
        yield
    finally:
        del _HELD[folder]
        if fd is not None:
            if locked:
                try:
                    fcntl.flock(fd, fcntl.LOCK_UN)
                except OSError:
                    pass
            os.close(fd)


_HELD: dict[Path, int] = {}  # folders whose lock this process holds, and how deep


def in_flight_prefix(stem: str) -> str:
    """The name prefix of a temporary this process writes beside ``stem``'s file."""
    return f".{stem}.inflight-{os.getpid()}."


def _in_flight(entry: Path) -> bool:
    m = IN_FLIGHT.search(entry.name)
    if m is None or not entry.is_file():
        return False
    try:
        os.kill(int(m.group(1)), 0)
    except (ProcessLookupError, OverflowError):  # no such process (a number beyond any pid)
        return False
    except PermissionError:  # another user's process
        return True
    return True
KINDS = ("run", "mesh", "sweep", "gridstudy", "compare", "verify", "uncertainty")
CHUNK = 1 << 20

# The names each kind of output writes at the top of its folder (glob patterns). A foreign file of
# such a name is refused when the folder is claimed, before any work, even with --force: the tool
# would have to replace it. tests/conftest.py checks every manifest the tests leave against these.
OUTPUT_NAMES = {
    "run": ("summary.json", "case.toml", "understood.txt", "report.html", "report_error.txt", "*.vtu", "*.csv", "*.csv.json", "plot_*.png",
            "view_*.png"),
    "mesh": ("mesh.msh", "mesh.vtu"),
    "sweep": ("sweep.json", "sweep.csv", "sweep.csv.json", "sweep.html", "plot_*.png", "*.error.txt"),
    "gridstudy": ("gridstudy.json", "gridstudy.csv", "gridstudy.csv.json", "gridstudy.html", "convergence.png",
                  "level-*.error.txt"),
    "compare": ("compare.html", "compare.csv", "compare.csv.json", "compare_*.png"),
    "verify": ("verify.json", "verify.csv", "verify.csv.json", "verify.html", "verify_*.png"),
    "uncertainty": ("uncertainty.json", "uncertainty.csv", "uncertainty.csv.json", "uncertainty.html",
                    "uncertainty_*.png", "convergence.png", "*.error.txt"),
}


# ... and the sub-folders it writes whole (a run folder each), replaced with everything in them
OUTPUT_FOLDERS = {"sweep": ("[0-9a-f]" * 12,), "gridstudy": ("level-*",), "uncertainty": ("runs",)}


def output_name(kind: str, rel: str) -> bool:
    """Whether ``kind`` output writes the file at ``rel`` (a path relative to its folder) itself, or
    the sub-folder that holds it."""
    from fnmatch import fnmatchcase

    top, sep, _ = rel.partition("/")
    if sep:
        return any(fnmatchcase(top, pat) for pat in OUTPUT_FOLDERS.get(kind, ()))
    return any(fnmatchcase(rel, pat) for pat in OUTPUT_NAMES[kind])


class OwnershipError(ValueError):
    """An output folder that must not be replaced (names the folder and what is foreign in it)."""


@dataclass
class Manifest:
    kind: str
    files: dict[str, str] = field(default_factory=dict)  # relative path -> sha256
    host: str = ""
    pid: int = 0
    partial: bool = False

    def to_json(self) -> str:
        return json.dumps({"software": "axibore", "version": __version__, "kind": self.kind, "partial": self.partial,
                           "host": self.host, "pid": self.pid, "files": dict(sorted(self.files.items()))}, indent=1)


def file_hash(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(CHUNK), b""):
            h.update(block)
    return h.hexdigest()


def read_manifest(folder: str | Path) -> Manifest | None:
    """The manifest of ``folder``, or None where there is none (or it is damaged: then nothing in the
    folder counts as the tool's)."""
    path = Path(folder) / MANIFEST
    try:
        d = json.loads(path.read_text(encoding="utf-8"))
        if d.get("software") != "axibore" or d.get("kind") not in KINDS or not isinstance(d.get("files"), dict):
            return None
        return Manifest(d["kind"], {str(k): str(v) for k, v in d["files"].items()}, str(d.get("host", "")),
                        int(d.get("pid", 0)), bool(d.get("partial", False)))
    except (OSError, ValueError, TypeError, AttributeError):
        return None


def _walk(folder: Path) -> list[Path]:
    """Files and symlinks under ``folder``, not descending into sub-folders that have a manifest."""
    out = []
    for entry in sorted(folder.iterdir()):
        if entry.name == MANIFEST:
            continue
        if entry.is_dir() and not entry.is_symlink():
            if (entry / MANIFEST).exists():
                out.append(entry)  # judged by its own manifest
            else:
                out.extend(_walk(entry))
        else:
            out.append(entry)
    return out


def owned_files(folder: str | Path, manifest: Manifest | None = None) -> tuple[list[Path], list[Path]]:
    """(the tool's unchanged files, the foreign entries) of ``folder``: a file is the tool's when its
    manifest lists it with the same hash; a sub-folder with a manifest of its own is the tool's when
    all of it is. Everything else (extra files, changed files, folders without a manifest) is foreign."""
    folder = Path(folder)
    manifest = manifest if manifest is not None else read_manifest(folder)
    own, foreign = [], []
    if not folder.is_dir():
        return own, foreign
    for entry in _walk(folder):
        rel = entry.relative_to(folder).as_posix()
        if entry.is_dir():
            sub_own, sub_foreign = owned_files(entry)
            if read_manifest(entry) is None or sub_foreign:
                foreign.extend(sub_foreign or [entry])
            else:
                own.append(entry)
        elif manifest is not None and rel in manifest.files and not entry.is_symlink() and \
                file_hash(entry) == manifest.files[rel]:
            own.append(entry)
        else:
            foreign.append(entry)
    return own, foreign


def write_manifest(folder: str | Path, kind: str, partial: bool = False) -> Manifest:
    """Record every file now under ``folder`` as the tool's: for a folder the command has just built
    (a temporary one), where nothing else can be. Sub-folders with a manifest are left to it."""
    folder = Path(folder)
    m = Manifest(kind, host=socket.gethostname(), pid=os.getpid(), partial=partial)
    for entry in _walk(folder):
        if entry.is_file() and not entry.is_symlink():
            m.files[entry.relative_to(folder).as_posix()] = file_hash(entry)
    _save(folder, m)
    return m


def _save(folder: Path, m: Manifest) -> None:
    tmp = folder / (MANIFEST + f".inflight-{os.getpid()}.tmp")
    tmp.write_text(m.to_json(), encoding="utf-8")
    os.replace(tmp, folder / MANIFEST)


def record(folder: str | Path, kind: str, written: list[str | Path]) -> Manifest:
    """Add the files just ``written`` (paths inside ``folder``) to its manifest, keeping the entries
    of the tool's other files; made anew where the folder had none."""
    folder = Path(folder)
    with folder_lock(folder):  # read, change, write: another process may record in the same folder
        m = read_manifest(folder)
        if m is None or m.kind != kind:
            m = Manifest(kind, host=socket.gethostname(), pid=os.getpid())
        for w in written:
            p = Path(w)
            p = p if p.is_absolute() else folder / p
            if p.is_file():
                m.files[p.relative_to(folder).as_posix()] = file_hash(p)
        _save(folder, m)
    return m


def _listing(paths: list[Path], folder: Path, limit: int = 6) -> str:
    names = [p.relative_to(folder).as_posix() + ("/" if p.is_dir() else "") for p in paths]
    more = f" and {len(names) - limit} more" if len(names) > limit else ""
    return ", ".join(names[:limit]) + more


@dataclass
class Claim:
    """What a command may do with its output folder, decided before any work."""

    path: Path
    kind: str
    fresh: bool  # absent or empty: nothing to replace
    foreign: list[Path]  # entries the tool did not write (kept; only with --force)
    own: list[Path]  # the tool's unchanged files and sub-folders of an earlier output (replaced)


def claim(path: str | Path, kind: str, force: bool = False) -> Claim:
    """Check that ``kind`` output may be written to the folder ``path`` (module docstring); raises
    OwnershipError naming what is foreign otherwise."""
    path = Path(path)
    if not path.exists() or (path.is_dir() and not any(path.iterdir())):
        return Claim(path, kind, True, [], [])
    if path.is_dir():
        with folder_lock(path):
            return _claim(path, kind, force)
    return _claim(path, kind, force)


def _claim(path: Path, kind: str, force: bool) -> Claim:
    m = read_manifest(path)
    if m is not None and m.kind != kind:
        raise OwnershipError(f"{path}: holds axibore {m.kind} output, not {kind} output; give another folder "
                             f"(--out) for the {kind}")
    own, foreign = owned_files(path, m)
    changed = [f for f in foreign if m is not None and f.relative_to(path).as_posix() in m.files]
    if changed:  # the tool writes these names again: even --force cannot write beside them
        raise OwnershipError(f"{path}: {_listing(changed, path)} was written by axibore and changed since: not replaced, "
                             "even with --force; move it away or give another --out")
    clash = [f for f in foreign if f.is_file() and output_name(kind, f.relative_to(path).as_posix())]
    if clash:  # even --force cannot write beside a file it would have to replace
        raise OwnershipError(f"{path}: {_listing(clash, path)} {'is' if len(clash) == 1 else 'are'} not axibore's "
                             f"(or changed since) and {kind} output writes that name: not replaced, even with "
                             "--force; move it away or give another --out")
    blocking = [f for f in foreign if not _in_flight(f)]  # another writer's temporary: kept, and no refusal
    if blocking and not force:
        foreign = blocking
        why = "it has no axibore manifest" if m is None else "they were not written by axibore, or changed since"
        raise OwnershipError(f"{path}: holds files axibore did not write ({_listing(foreign, path)}; {why}): refusing "
                             "to replace them; give another --out, or --force to write beside them (only the tool's own "
                             "unchanged files are replaced)")
    return Claim(path, kind, False, foreign, own)


def install(tmp: Path, c: Claim) -> None:
    """Move the complete output in ``tmp`` to the claimed folder. Without foreign files the folder is
    replaced whole by one rename; with them (``--force``) the tool's own files are deleted and the new
    ones moved in beside the foreign ones. The foreign files are checked again here: one added while
    the command ran is kept too."""
    path = c.path
    if path.exists():
        own, foreign = owned_files(path)
    else:
        own, foreign = [], []
    if not foreign:
        old = None
        if path.exists():
            old = path.with_name(f".{path.name}.old-{os.getpid()}")
            os.replace(path, old)
        os.replace(tmp, path)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
        return
    keep = {f.relative_to(path).as_posix() for f in foreign}
    clash = sorted(rel for rel in (s.relative_to(tmp).as_posix() for s in tmp.rglob("*") if not s.is_dir()) if rel in keep)
    if clash:
        shutil.rmtree(tmp, ignore_errors=True)
        raise OwnershipError(f"{path}: {', '.join(clash)}: put there while the command ran, not by axibore: not "
                             "replaced, even with --force; give another --out")
    for p in own:
        if p.is_dir():
            shutil.rmtree(p, ignore_errors=True)
        else:
            p.unlink(missing_ok=True)
    for src in sorted(tmp.rglob("*")):
        if src.is_dir():
            continue
        rel = src.relative_to(tmp).as_posix()
        dst = path / rel
        dst.parent.mkdir(parents=True, exist_ok=True)
        os.replace(src, dst)
    shutil.rmtree(tmp, ignore_errors=True)


def stale_partial(folder: Path) -> bool:
    """A partial folder of a process of this host that no longer runs (module docstring)."""
    m = read_manifest(folder)
    if m is None or not m.partial or m.host != socket.gethostname() or m.pid <= 0 or m.pid == os.getpid():
        return False
    try:
        os.kill(m.pid, 0)
        return False
    except ProcessLookupError:
        return True
    except (PermissionError, OSError):
        return False


def remove_own(folder: str | Path, pattern: str) -> list[Path]:
    """Delete the files matching ``pattern`` in ``folder`` that its manifest lists unchanged (an
    output of an earlier pass the next one replaces); any other file is left alone."""
    folder = Path(folder)
    removed = []
    with folder_lock(folder):  # read, change, write: another process may record in the same folder
        m = read_manifest(folder)
        if m is None:
            return removed
        for p in folder.glob(pattern):
            rel = p.relative_to(folder).as_posix()
            if p.is_file() and not p.is_symlink() and m.files.get(rel) == file_hash(p):
                p.unlink()
                m.files.pop(rel)
                removed.append(p)
        _save(folder, m)
    return removed


def replaceable(folder: str | Path, kind: str) -> bool:
    """Whether ``folder`` is an output of ``kind`` holding nothing but the tool's unchanged files."""
    m = read_manifest(folder)
    return m is not None and m.kind == kind and not owned_files(folder, m)[1]
