"""Atomic writes: a file or a directory appears complete or not at all."""

from __future__ import annotations

import csv
import io
import json
import os
import shutil
import tempfile
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from .ownership import OwnershipError, claim, in_flight_prefix, install, output_name, read_manifest, stale_partial, write_manifest
from .vtu import write_unstructured


class ForeignFile(ValueError):
    """A file in the way that axibore did not write (or that changed since): never replaced."""


_WRITTEN: set[Path] = set()  # files this process wrote: it may write them again
PNG_SOFTWARE = b"axibore"  # the tEXt "Software" of every picture the tool writes


def png_software(path: Path) -> bytes:
    """The tEXt "Software" value of a PNG file (b"" where there is none or it is no PNG)."""
    import struct

    try:
        with open(path, "rb") as f:
            if f.read(8) != b"\x89PNG\r\n\x1a\n":
                return b""
            for _ in range(64):
                head = f.read(8)
                if len(head) < 8:
                    return b""
                n, kind = struct.unpack(">I4s", head)
                if kind in (b"IDAT", b"IEND"):
                    return b""
                data = f.read(n)
                f.read(4)
                if kind == b"tEXt" and data.startswith(b"Software\0"):
                    return data[len(b"Software\0"):]
    except OSError:
        pass
    return b""


def mark_png(path: Path) -> None:
    """Put a tEXt "Software: axibore" chunk after the header of the PNG at ``path`` (in place)."""
    import struct
    import zlib

    raw = Path(path).read_bytes()
    end = 8 + 8 + struct.unpack(">I", raw[8:12])[0] + 4  # signature, IHDR chunk
    body = b"tEXt" + b"Software\0" + PNG_SOFTWARE
    chunk = struct.pack(">I", len(body) - 4) + body + struct.pack(">I", zlib.crc32(body) & 0xFFFFFFFF)
    Path(path).write_bytes(raw[:end] + chunk + raw[end:])


def written_by_axibore(path: str | Path) -> bool:
    """Whether the file at ``path`` is the tool's to replace: written by this process, listed in the
    manifest of its folder (or of one of the two above) or named as that kind of output writes (a
    foreign file of such a name, or a listed one changed since, was refused when the folder was
    claimed, before any work; one that changed since then is another axibore process's write of a
    shared study folder), or a picture carrying the tool's mark."""
    path = Path(os.path.abspath(path))
    if path in _WRITTEN:
        return True
    folder = path.parent
    for _ in range(3):
        m = read_manifest(folder)
        if m is not None:
            rel = path.relative_to(folder).as_posix()
            if rel in m.files or output_name(m.kind, rel):
                return True
            break
        folder = folder.parent
    return path.suffix.lower() == ".png" and png_software(path).startswith(PNG_SOFTWARE)


def _not_foreign(path: Path) -> None:
    """Refuse to write over a file the tool did not write (the product's first rule)."""
    if path.is_file() and not written_by_axibore(path):
        raise ForeignFile(f"{path}: exists and was not written by axibore (or was changed since): not replaced, "
                          "even with --force; move it away or choose another name")


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` (UTF-8, LF line ends) to ``path`` through ``atomic_file``."""
    with atomic_file(path, suffix=".tmp") as tmp:
        with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
    return Path(path)


@contextmanager
def atomic_file(path: str | Path, suffix: str | None = None):
    """Yield a temporary path beside ``path``; rename it to ``path`` when the block succeeds.

    ``suffix`` keeps the file ending (writers such as Gmsh and meshio choose the format by it).
    """
    path = Path(path)
    _not_foreign(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=in_flight_prefix(path.stem), suffix=suffix or path.suffix, dir=path.parent)
    os.close(fd)
    try:
        yield Path(tmp)
        os.chmod(tmp, 0o644)
        if path.suffix.lower() == ".png" and not png_software(Path(tmp)).startswith(PNG_SOFTWARE):
            mark_png(Path(tmp))
        _not_foreign(path)  # a file put there while this one was written is kept too
        os.replace(tmp, path)
        _WRITTEN.add(Path(os.path.abspath(path)))
    except BaseException as exc:
        Path(tmp).unlink(missing_ok=True)
        if isinstance(exc, OSError) and exc.filename == tmp:  # name the file being written, not its temporary
            raise OSError(exc.errno, exc.strerror, str(path)) from None
        raise


class OutputError(ValueError):
    """An output location that cannot or must not be written (names the path and why)."""


def is_run_directory(path: Path) -> bool:
    """A complete run folder axibore wrote (its manifest says so)."""
    m = read_manifest(path)
    return m is not None and m.kind == "run" and not m.partial


def check_output_dir(path: str | Path, kind: str = "run", force: bool = False, say=None) -> Path:
    """The real path an output folder of ``kind`` will be written to, checked before any work starts.

    Refused: an existing file; the working directory or one above it; a parent that cannot be
    written; a folder the ownership rule (``io.ownership``) does not let this output replace. With
    ``force`` the output is written beside the foreign files, which ``say`` lists. A symlink is
    followed to its target.
    """
    path = Path(path).expanduser()
    if path.is_symlink():
        path = path.resolve()
    path = Path(os.path.abspath(path))
    if path.exists() and not path.is_dir():
        raise OutputError(f"{path}: exists and is a file, not a folder; give another --out")
    if path == Path.cwd() or path in Path.cwd().parents:
        raise OutputError(f"{path}: is the working directory or one above it; give a new folder for --out")
    try:
        c = claim(path, kind, force)
    except OwnershipError as exc:
        raise OutputError(str(exc)) from None
    if c.foreign and say:
        n = len(c.foreign)
        say(f"--force: {path} holds {n} {'file' if n == 1 else 'files'} axibore did not write or that changed since; "
            f"{'it is' if n == 1 else 'they are'} kept, "
            f"and only the tool's own unchanged files are replaced")
    parent = path.parent
    while not parent.exists():
        parent = parent.parent
    if not os.access(parent, os.W_OK | os.X_OK):
        raise OutputError(f"{path}: cannot write in {parent} (permission denied); give another --out")
    try:
        probe = tempfile.NamedTemporaryFile(dir=parent, prefix=".axibore-write-test.", delete=True)
        probe.close()
    except OSError as exc:
        raise OutputError(f"{path}: cannot write in {parent} ({exc.strerror}); give another --out") from None
    return path


def clean_stale_partials(parent: Path) -> list[Path]:
    """Remove temporary output folders left by killed processes of this host (``io.ownership``)."""
    removed = []
    if not parent.is_dir():
        return removed
    for d in parent.glob(".*.partial"):
        if d.is_dir() and not d.is_symlink() and stale_partial(d):
            shutil.rmtree(d, ignore_errors=True)
            removed.append(d)
    return removed


@contextmanager
def atomic_dir(path: str | Path, kind: str = "run", force: bool = False):
    """Yield a temporary folder beside ``path``; on success its files, with their manifest, replace
    the output at ``path`` by the ownership rule (``io.ownership``: whole where nothing foreign is
    there; beside the foreign files with ``force``; refused (OutputError) where foreign files
    appeared meanwhile without it)."""
    import signal

    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    held = {signal.SIGINT, signal.SIGTERM, signal.SIGHUP}
    try:  # no interrupt between making the folder and owning its removal
        signal.pthread_sigmask(signal.SIG_BLOCK, held)
    except (ValueError, OSError, AttributeError):
        held = set()
    tmp = None
    try:
        tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.pid-{os.getpid()}.", suffix=".partial", dir=path.parent))
        os.chmod(tmp, 0o755)
        write_manifest(tmp, kind, partial=True)  # host and pid: only this process's partial folder
        if held:
            signal.pthread_sigmask(signal.SIG_UNBLOCK, held)
            held = set()
        yield tmp
    except BaseException as exc:
        # an interrupt may land before ``tmp`` is bound (a signal already pending when the mask was set):
        # remove every temporary folder of this process for this path
        for d in [tmp] if tmp is not None else path.parent.glob(f".{path.name}.pid-{os.getpid()}.*.partial"):
            shutil.rmtree(d, ignore_errors=True)
        if isinstance(exc, OSError) and tmp is not None and exc.filename and Path(exc.filename).is_relative_to(tmp):
            # a disk filling up while the output is written: name the file as the user knows it
            raise OSError(exc.errno, f"{exc.strerror or exc}; nothing was written to {path} (anything there before is "
                          "unchanged)", str(path / Path(exc.filename).relative_to(tmp))) from None
        raise
    finally:
        if held:
            signal.pthread_sigmask(signal.SIG_UNBLOCK, held)
    try:
        write_manifest(tmp, kind)
        install(tmp, claim(path, kind, force))
    except OwnershipError as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        raise OutputError(str(exc)) from None
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def write_csv(path: str | Path, columns: dict[str, np.ndarray], description: str = "") -> Path:
    """Write named numeric columns as CSV (csv module, atomically), the header row first so that
    ordinary readers (numpy genfromtxt names=True, pandas, spreadsheets) take it as it is.

    ``description``: what the file holds, written beside it as NAME.csv.json with the column names.
    """
    names = list(columns)
    data = np.column_stack([np.asarray(columns[n], float) for n in names]) if names else np.zeros((0, 0))
    if description:
        atomic_write_text(Path(path).with_name(Path(path).name + ".json"),
                          json.dumps({"file": Path(path).name, "description": description, "columns": names}, indent=2) + "\n")
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow(names)
    if data.size:  # numbers need no CSV quoting: one format per row is several times faster than the csv module
        fmt = ",".join(["%.10g"] * len(names))
        buf.write("\n".join(fmt % tuple(row) for row in data.tolist()))
        buf.write("\n")
    return atomic_write_text(path, buf.getvalue())


def write_table(path: str | Path, text: str, description: str) -> Path:
    """Write CSV ``text`` (its header row first) to ``path`` and NAME.csv.json beside it with
    ``description`` and the column names: for tables with text columns (studies, verify)."""
    path = Path(path)
    names = next(csv.reader(io.StringIO(text)), [])
    atomic_write_text(path.with_name(path.name + ".json"),
                      json.dumps({"file": path.name, "description": description, "columns": names}, indent=2) + "\n")
    return atomic_write_text(path, text)


def read_csv(path: str | Path) -> dict[str, np.ndarray]:
    """Named numeric columns of a CSV written by ``write_csv`` ('#' lines skipped)."""
    try:
        lines = [ln for ln in Path(path).read_text(encoding="utf-8").splitlines() if ln and not ln.startswith("#")]
        rows = list(csv.reader(lines))
        names = rows[0]
        data = np.array([[float(v) for v in row] for row in rows[1:]], float).reshape(-1, len(names))
    except (ValueError, IndexError, UnicodeDecodeError) as exc:
        why = "no header or rows" if isinstance(exc, IndexError) else ("not UTF-8 text" if isinstance(exc, UnicodeDecodeError)
                                                                         else f"a value that is not a number: {exc}")
        raise DamagedFile(f"{path}: damaged or cut short ({why}); run the case again to write it anew") from None
    if data.shape[0] == 0:
        raise DamagedFile(f"{path}: has its header but no rows; run the case again to write it anew")
    return {n: data[:, i] for i, n in enumerate(names)}


class DamagedFile(ValueError):
    """A file axibore wrote that can no longer be read (cut short, edited): names the file."""


def intact_vtk(path: str | Path) -> Path:
    """``path`` if it is a whole VTK XML file (it ends with its closing tag), else DamagedFile: checked
    before a reader parses it, which would print its own complaints about a file cut short."""
    path = Path(path)
    try:
        size = path.stat().st_size
        with open(path, "rb") as f:
            f.seek(max(0, size - 256))
            tail = f.read()
    except OSError as exc:
        raise DamagedFile(f"{path}: cannot be read ({exc.strerror}); run the case again to write it anew") from None
    if b"</VTKFile>" not in tail:
        raise DamagedFile(f"{path}: damaged or cut short (no closing </VTKFile>); run the case again to write it anew")
    return path


def write_vtu(path: str | Path, mesh, cell_data: dict[str, np.ndarray] | None = None,
              point_data: dict[str, np.ndarray] | None = None) -> Path:
    """An FVMesh and its fields as a compressed binary .vtu (z = 0 plane: x along the axis, y = r);
    cell data per cell, (C,) scalars or (C, 3) vectors, in the cell order of each cell kind's block."""
    pts = np.column_stack([mesh.nodes, np.zeros(len(mesh.nodes))])
    tri = mesh.nvert == 3
    order = [idx for idx in (np.flatnonzero(tri), np.flatnonzero(~tri)) if len(idx)]
    blocks = [("triangle" if mesh.nvert[idx[0]] == 3 else "quad", mesh.cells[idx, :mesh.nvert[idx[0]]]) for idx in order]
    data = {name: [np.asarray(values)[idx] for idx in order] for name, values in (cell_data or {}).items()}
    with atomic_file(path) as tmp:
        write_unstructured(tmp, pts, blocks, point_data, data)  # binary, zlib level 1
    return Path(path)
