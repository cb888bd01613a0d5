"""VTK XML unstructured-grid files (.vtu), binary and zlib-compressed, written directly.

The layout is the VTK XML file format (Kitware, "VTK File Formats", XML section): each DataArray
holds, in base64, a header of UInt64 words [number of blocks, block size, size of the last block,
compressed size of each block] followed by the zlib-compressed blocks. ParaView, VTK, PyVista and
meshio read it. Written here rather than through meshio because meshio compresses at zlib's
default level 6, which was 0.6 s of a 1.9 s run at 100k cells; level 1 is some five times faster
and the files are about 10 % larger. The blocks are compressed on every core (zlib releases the
interpreter lock while it compresses): 2 cores, 168k cells, fields.vtu 0.25 -> 0.15 s.
"""

from __future__ import annotations

import base64
import os
import zlib
from concurrent.futures import Executor, ThreadPoolExecutor
from pathlib import Path

import numpy as np

VTK_CELL_TYPES = {"triangle": 5, "quad": 9}
BLOCK_BYTES = 1 << 16
ZLIB_LEVEL = 1
_VTK_TYPES = {np.dtype("float64"): "Float64", np.dtype("float32"): "Float32", np.dtype("int64"): "Int64",
              np.dtype("int32"): "Int32", np.dtype("uint8"): "UInt8"}


def _threads() -> int:
    """The cores this process may use (its CPU affinity), or OMP_NUM_THREADS where it is set: the
    study runner gives each worker process one thread, and its writes stay on that one."""
    try:
        n = int(os.environ.get("OMP_NUM_THREADS", ""))
    except ValueError:
        n = 0
    if n < 1:
        n = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    return max(1, min(n, 8))


def _compress(block: bytes) -> bytes:
    return zlib.compress(block, ZLIB_LEVEL)


def _encoded(values: np.ndarray, pool: Executor) -> str:
    raw = np.ascontiguousarray(values).astype(values.dtype.newbyteorder("<"), copy=False).tobytes()
    blocks = list(pool.map(_compress, (raw[i:i + BLOCK_BYTES] for i in range(0, len(raw), BLOCK_BYTES)))) or [b""]
    last = len(raw) - (len(blocks) - 1) * BLOCK_BYTES if raw else 0
    header = np.array([len(blocks) if raw else 0, BLOCK_BYTES, last, *(len(b) for b in blocks if raw)], "<u8")
    return base64.b64encode(header.tobytes()).decode() + base64.b64encode(b"".join(blocks)).decode()


def _array(name: str, values: np.ndarray, pool: Executor) -> str:
    values = np.asarray(values)
    if values.dtype not in _VTK_TYPES:
        values = values.astype(np.float64 if values.dtype.kind == "f" else np.int64)
    comps = f' NumberOfComponents="{values.shape[1]}"' if values.ndim == 2 else ""
    return (f'<DataArray type="{_VTK_TYPES[values.dtype]}" Name="{name}"{comps} format="binary">'
            f"{_encoded(values, pool)}</DataArray>\n")


def write_unstructured(path: str | Path, points: np.ndarray, blocks: list[tuple[str, np.ndarray]],
                       point_data: dict[str, np.ndarray] | None = None,
                       cell_data: dict[str, list[np.ndarray]] | None = None) -> Path:
    """Write ``points`` (N, 3), cell ``blocks`` [(kind, connectivity)] with kind in VTK_CELL_TYPES, point
    data (N,) or (N, k) and cell data given per block (like meshio's cell_data) to ``path``."""
    points = np.asarray(points, np.float64)
    conn = np.concatenate([np.asarray(c, np.int64).ravel() for _, c in blocks])
    sizes = np.concatenate([np.full(len(c), np.asarray(c).shape[1], np.int64) for _, c in blocks])
    types = np.concatenate([np.full(len(c), VTK_CELL_TYPES[k], np.uint8) for k, c in blocks])
    with ThreadPoolExecutor(max_workers=_threads()) as pool:
        parts = ['<?xml version="1.0"?>\n<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" '
                 'header_type="UInt64" compressor="vtkZLibDataCompressor">\n<UnstructuredGrid>\n'
                 f'<Piece NumberOfPoints="{len(points)}" NumberOfCells="{len(types)}">\n',
                 "<Points>\n", _array("Points", points, pool), "</Points>\n",
                 "<Cells>\n", _array("connectivity", conn, pool), _array("offsets", np.cumsum(sizes), pool),
                 _array("types", types, pool), "</Cells>\n"]
        if point_data:
            parts += ["<PointData>\n", *(_array(n, v, pool) for n, v in point_data.items()), "</PointData>\n"]
        if cell_data:
            parts += ["<CellData>\n", *(_array(n, np.concatenate([np.asarray(b) for b in v]), pool)
                                         for n, v in cell_data.items()), "</CellData>\n"]
        parts.append("</Piece>\n</UnstructuredGrid>\n</VTKFile>\n")
    path = Path(path)
    path.write_text("".join(parts), encoding="ascii")
    return path
