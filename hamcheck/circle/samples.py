"""One loader for samples of a periodic quantity on a uniform grid (.npy, .csv or .py files).

Both classifiers (``hamcheck classify`` for Hill potentials, ``hamcheck
holonomy`` for connections) read their input through :func:`read_input`,
which wraps :func:`load_periodic_samples`: it checks the shape the family
expects, finds the coupling (``c``) in the arguments or the file, and measures
how well the samples resolve the function.

>>> import tempfile, numpy as np, os
>>> p = os.path.join(tempfile.mkdtemp(), "t.npy"); np.save(p, 0.3 + np.cos(np.arange(16) * np.pi / 8))
>>> data = read_input(p, "T", 1.0, shape=(), what="real scalar samples (one per grid point)")
>>> data.values.shape, data.c, data.warning is None
((16,), 1.0, True)
"""

from __future__ import annotations

import math
import os
import runpy
from dataclasses import dataclass

import numpy as np

from ..errors import UsageError
from .periodic import _positive_int, grid, resolution_warning

__all__ = ["LoadedSamples", "load_periodic_samples", "ClassificationInput", "read_input", "coupling"]


def coupling(c, what: str) -> float:
    """``c`` as a float, or one :class:`~hamcheck.UsageError` naming ``what`` (e.g. "level c") when it is not
    a nonzero finite real number (the central charge or the level of both families)."""
    try:
        value = float(c)
    except (TypeError, ValueError):
        value = math.nan
    if not math.isfinite(value) or value == 0.0:
        raise UsageError(f"the {what} must be a nonzero finite real number; got {c!r}")
    return value


@dataclass(frozen=True)
class LoadedSamples:
    """Samples of a periodic quantity read from a file.

    ``values`` has shape ``(M,) + value_shape`` on ``theta_j = 2 pi j / M``;
    ``params`` holds the extra scalars found in a .py file (e.g. ``c``);
    ``function`` is the callable when the file defined one.
    """

    values: np.ndarray
    source: str
    kind: str  # "npy", "csv", "py-array", "py-callable"
    params: dict
    function: object = None

    @property
    def M(self) -> int:
        return int(self.values.shape[0])


def load_periodic_samples(path, name: str = "T", *, params=("c",), value_shape=None, M: int = 512) -> LoadedSamples:
    """Read samples of a periodic quantity on a uniform grid.

    * ``.npy``: an array whose axis 0 runs over ``theta_j = 2 pi j / M``.
    * ``.csv``: one row per grid point (commas or whitespace; a non-numeric
      header line is skipped); one column gives shape (M,), k columns (M, k).
    * ``.py``: a file defining ``name`` as an array of samples or a callable of
      theta (vectorised over a numpy array, or called point by point), plus the
      scalars listed in ``params`` when present. A callable is sampled on ``M``
      points.

    ``value_shape`` (e.g. ``(2, 2)``) reshapes each row; a mismatch raises
    :class:`~hamcheck.UsageError` naming the expected shape.

    >>> import tempfile, numpy as np, os
    >>> p = os.path.join(tempfile.mkdtemp(), "t.npy"); np.save(p, np.ones(8))
    >>> load_periodic_samples(p).values.shape
    (8,)
    """
    path = os.fspath(path)
    if not os.path.exists(path):
        raise UsageError(f"no such file: {path}; expected a .npy, .csv or .py file with samples of {name}")
    ext = os.path.splitext(path)[1].lower()
    found = {}
    fn = None
    if ext == ".npy":
        try:
            vals = np.load(path, allow_pickle=False)
        except Exception as exc:
            raise UsageError(f"could not read {path} as a numpy .npy array ({type(exc).__name__}: {exc})") from None
        kind = "npy"
    elif ext in (".csv", ".txt"):
        vals = _read_csv(path)
        kind = "csv"
    elif ext == ".py":
        try:
            ns = runpy.run_path(path)
        except Exception as exc:
            raise UsageError(f"running {path} raised {type(exc).__name__}: {exc}") from None
        if name not in ns:
            raise UsageError(f"{path} does not define {name!r}; expected {name} = <array of samples> or a function of theta")
        obj = ns[name]
        for p in params:
            if p in ns:
                try:
                    found[p] = float(ns[p])
                except (TypeError, ValueError):
                    raise UsageError(f"{path}: {p} = {ns[p]!r} is not a number") from None
        if callable(obj):
            fn = obj
            vals = _sample_callable(obj, _positive_int(M, "M"), name, path)
            kind = "py-callable"
        else:
            vals = np.asarray(obj)
            kind = "py-array"
    else:
        raise UsageError(f"unsupported file type {ext or '(none)'} for {path}; expected .npy, .csv or .py")
    vals = np.asarray(vals)
    if not np.issubdtype(vals.dtype, np.number):
        raise UsageError(f"{path}: samples of {name} must be numbers; got dtype {vals.dtype}")
    if vals.ndim == 0 or vals.shape[0] < 3:
        raise UsageError(f"{path}: expected at least 3 samples of {name} along axis 0; got shape {vals.shape}")
    if value_shape is not None:
        value_shape = tuple(value_shape)
        size = int(np.prod(value_shape)) if value_shape else 1
        if int(np.prod(vals.shape[1:])) != size:
            raise UsageError(
                f"{path}: each sample of {name} should have shape {value_shape}; got {vals.shape[1:]} "
                f"(array shape {vals.shape})"
            )
        vals = vals.reshape((vals.shape[0],) + value_shape)
    if not np.all(np.isfinite(vals)):
        bad = int(np.flatnonzero(~np.isfinite(vals.reshape(vals.shape[0], -1)).any(axis=1))[0])
        raise UsageError(f"{path}: sample {bad} of {name} is NaN or inf; expected finite values")
    vals = vals.astype(np.complex128 if np.iscomplexobj(vals) else np.float64)
    return LoadedSamples(vals, path, kind, found, fn)


def _read_csv(path):
    rows = []
    with open(path, encoding="utf-8") as fh:
        for lineno, line in enumerate(fh, 1):
            s = line.strip()
            if not s or s.startswith("#"):
                continue
            parts = [p for p in s.replace(",", " ").split() if p]
            try:
                rows.append([float(p) for p in parts])
            except ValueError:
                if not rows:
                    continue  # header line
                raise UsageError(f"{path}:{lineno}: could not read numbers from {s[:60]!r}") from None
    if not rows:
        raise UsageError(f"{path} holds no numeric rows; expected one sample per line")
    widths = {len(r) for r in rows}
    if len(widths) != 1:
        raise UsageError(f"{path}: rows have different numbers of columns {sorted(widths)}; expected the same in every row")
    arr = np.asarray(rows, dtype=float)
    if arr.shape[1] == 1:
        return arr[:, 0]
    if arr.shape[0] == 1:
        return arr[0]
    return arr


def _sample_callable(fn, M, name, path):
    th = grid(M)
    try:
        vals = np.asarray(fn(th))
        if vals.shape[:1] == (M,):
            return vals
    except Exception:
        pass
    try:
        return np.stack([np.asarray(fn(float(t))) for t in th])
    except Exception as exc:
        raise UsageError(f"{path}: calling {name}(theta) raised {type(exc).__name__}: {exc}") from None


@dataclass(frozen=True)
class ClassificationInput:
    """Samples read by :func:`read_input`: values, the coupling ``c``, where they came from, resolution."""

    values: np.ndarray
    c: float
    source: str
    kind: str
    spectral_tail: float
    warning: str | None

    @property
    def M(self) -> int:
        return int(self.values.shape[0])


def read_input(path, name: str, c=None, *, shape: tuple, what: str, coupling: str = "central charge", M: int = 512):
    """Samples of ``name`` from a file, checked to be real with per-point ``shape``, and the coupling ``c``.

    ``c`` comes from the argument, else from a .py file's ``c``; one of them is
    required (the message names ``--c``). ``what`` describes the expected
    samples in the error message.
    """
    data = load_periodic_samples(path, name, params=("c",), M=M)
    vals = data.values
    if np.iscomplexobj(vals) or vals.shape[1:] != tuple(shape):
        raise UsageError(f"{path}: {name} must be {what}; got shape {vals.shape}")
    if c is None:
        c = data.params.get("c")
    if c is None:
        raise UsageError(f"no {coupling} for {path}: pass --c VALUE (or define c = ... in a .py file)")
    tail, warning = resolution_warning(vals, name)
    return ClassificationInput(vals, c, data.source, data.kind, tail, warning)
