"""One result type for the classification of a coadjoint orbit on the circle (both families).

:func:`hamcheck.virasoro.classify` (a Hill potential ``T`` at central charge
``c``: its monodromy) and :func:`hamcheck.loop_groups.classify` (a connection
``A dtheta`` at level ``c``: its holonomy) both return an
:class:`OrbitClassification`: the class, the trace, the propagated matrix with
its error estimate, the rotation number, the stabilizer dimension computed two
ways and their agreement, and a constant representative of the orbit.

It renders as text (:meth:`~OrbitClassification.text`), as JSON
(:meth:`~OrbitClassification.to_dict` / :meth:`~OrbitClassification.to_json`,
inverted by :meth:`~OrbitClassification.from_dict`) and as a
:class:`hamcheck.Report` (:meth:`~OrbitClassification.report`) whose results
are the classification's self-consistency checks, so ``--explain``, JSON
reports and the pytest plugin's helpers treat it like a model's check:

* ``stabilizers_agree``: the two stabilizer computations agree (same
  dimension; where both give bases, the largest sine of the principal angles);
* ``propagator_error``: the matrix's error estimate is far below the
  thresholds the class and the stabilizer are decided at;
* ``constant_trace``: the closed-form trace of the constant
  representative equals the measured trace (skipped without a representative).

>>> from hamcheck import virasoro
>>> inv = virasoro.classify(1.0, c=1.0)
>>> inv.orbit_class, inv.stabilizer_dim, inv.report().passed
('+identity', 3, True)
"""

from __future__ import annotations

import json
import math
import warnings
from dataclasses import dataclass, field, fields
from types import MappingProxyType
from typing import Mapping

import numpy as np

from ..report import CheckResult, Finding, Report
from .tolerances import TOLERANCES

__all__ = ["OrbitClassification", "format_classification"]

#: keys of the dictionaries the two classifiers returned before this type, mapped to today's names
_LEGACY = {
    "monodromy": "matrix",
    "holonomy": "matrix",
    "monodromy_error": "error",
    "holonomy_error": "error",
    "agree": "stabilizers_agree",
    "constant_representative": "representative",
    "a": "representative",
    "constant_note": "representative_note",
    "a_over_c": "rotation_number",
    "file": "source",
}

_STATEMENTS = {
    "stabilizers_agree": (
        "the stabilizer found from the {method} and the kernel of the Fourier-truncated infinitesimal action have "
        "the same dimension and, where both give bases, span the same functions (largest sine of the principal "
        "angles between them)"
    ),
    "propagator_error": (
        "the error estimate of the {matrix} (Magnus-6 with step doubling) is far below the thresholds the class "
        "and the stabilizer are decided at"
    ),
    "constant_trace": (
        "the constant representative's closed-form {matrix} trace equals the measured trace (relative to max(|trace|, 1))"
    ),
}


def _encode(value):
    """JSON-friendly values: complex numbers and arrays as {"real", "imag"}; numpy scalars as Python numbers."""
    if isinstance(value, np.ndarray):
        if np.iscomplexobj(value):
            return {"real": value.real.tolist(), "imag": value.imag.tolist()}
        return value.tolist()
    if isinstance(value, complex):
        return {"real": value.real, "imag": value.imag}
    if isinstance(value, Mapping):
        return {str(k): _encode(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_encode(v) for v in value]
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return str(value)
    return value


def _decode(value, matrix: bool = False):
    if isinstance(value, Mapping) and set(value) == {"real", "imag"}:
        z = np.asarray(value["real"]) + 1j * np.asarray(value["imag"])
        return z if matrix else complex(z)
    if isinstance(value, str) and value in ("inf", "-inf", "nan"):
        return float(value)
    return np.asarray(value, dtype=float) if matrix else value


def _number(v) -> str:
    if isinstance(v, complex):
        return f"{v.real:.10g}{v.imag:+.10g}i"
    if isinstance(v, float):
        return f"{v:.12g}"
    if isinstance(v, (list, tuple)):
        return ", ".join(_number(x) for x in v)
    return str(v)


@dataclass(frozen=True)
class OrbitClassification:
    """The invariants of a point of a coadjoint orbit on the circle (see the module docstring).

    ``family`` is ``"virasoro"`` or ``"loop group"``; ``matrix_name`` is
    ``"monodromy"`` or ``"holonomy"``; ``rotation_number`` is the Prüfer
    rotation number (Virasoro) or ``a/c = phi / 2 pi`` for the rotation angle
    ``phi`` of ``Ad_Hol`` (SU(2)); ``representative`` is the constant on the
    orbit (``T0``, or ``a`` in ``a e_3``) or None, with its closed-form trace.
    ``details`` holds family-specific numbers shown in the text.
    """

    family: str
    group: str
    c: float
    orbit_class: str
    trace: object
    matrix_name: str
    matrix: np.ndarray
    error: float
    steps: int
    rotation_number: float | None
    stabilizer_dim: int
    stabilizer_dim_fourier: int
    stabilizer_agreement: float
    stabilizer_method: str
    representative: float | None
    representative_note: str
    representative_trace: float | None = None
    representative_label: str = "T0"
    details: Mapping = field(default_factory=dict)
    stabilizer_singular_values: Mapping = field(default_factory=dict, repr=False)
    source: str | None = None
    input: str | None = None
    samples: int | None = None
    spectral_tail: float | None = None
    warning: str | None = None
    replay: str = ""

    def __post_init__(self):
        object.__setattr__(self, "matrix", np.asarray(self.matrix))
        object.__setattr__(self, "details", MappingProxyType(dict(self.details)))
        object.__setattr__(self, "stabilizer_singular_values", MappingProxyType(dict(self.stabilizer_singular_values)))

    def __repr__(self) -> str:
        rep = "none" if self.representative is None else f"{self.representative:.6g}"
        return (
            f"OrbitClassification({self.family}: {self.orbit_class}, trace={_number(self.trace)}, "
            f"stabilizer {self.stabilizer_dim}/{self.stabilizer_dim_fourier}, {self.representative_label}={rep})"
        )

    @property
    def stabilizers_agree(self) -> bool:
        return self.stabilizer_dim == self.stabilizer_dim_fourier and self.stabilizer_agreement <= TOLERANCES.stabilizer_agreement

    # --------------------------------------------------------------- mapping
    def __getitem__(self, key: str):
        """Dictionary-style access to :meth:`to_dict` keys and ``details`` (old keys warn and map to new ones)."""
        if key in _LEGACY:
            warnings.warn(f"classification[{key!r}] is deprecated; use [{_LEGACY[key]!r}]", DeprecationWarning, stacklevel=2)
            key = _LEGACY[key]
        if key == "class":
            return self.orbit_class
        if key == "stabilizers_agree":
            return self.stabilizers_agree
        if key in self.details:
            return self.details[key]
        if key in {f.name for f in fields(self)}:
            return getattr(self, key)
        raise KeyError(key)

    def __contains__(self, key) -> bool:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", DeprecationWarning)
                self[key]
        except KeyError:
            return False
        return True

    # ------------------------------------------------------------ machine
    def to_dict(self) -> dict:
        out = {"class" if f.name == "orbit_class" else f.name: _encode(getattr(self, f.name)) for f in fields(self)}
        out["stabilizers_agree"] = self.stabilizers_agree
        out["checks"] = {n: r.to_dict() for n, r in self.report().results.items()}
        return out

    def to_json(self, **kwargs) -> str:
        kwargs.setdefault("indent", 2)
        return json.dumps(self.to_dict(), **kwargs)

    @classmethod
    def from_dict(cls, data: Mapping) -> "OrbitClassification":
        """Inverse of :meth:`to_dict` (derived keys ``stabilizers_agree`` and ``checks`` are recomputed)."""
        kw = {}
        for f in fields(cls):
            key = "class" if f.name == "orbit_class" else f.name
            if key in data:
                kw[f.name] = _decode(data[key], matrix=f.name == "matrix")
        return cls(**kw)

    # --------------------------------------------------------------- text
    def text(self) -> str:
        """Plain-text rendering (what ``hamcheck classify`` and ``hamcheck holonomy`` print)."""
        lines = []
        if self.source:
            lines.append(f"{self.source}: {self.samples} samples ({self.input}), {self.group} at c = {self.c:g}")
        M = self.matrix
        if np.iscomplexobj(M):
            shown = "[" + ", ".join("[" + ", ".join(f"{z.real:.10g}{z.imag:+.10g}i" for z in row) + "]" for row in M) + "]"
        else:
            shown = "[" + ", ".join("[" + ", ".join(f"{v:.10g}" for v in row) + "]" for row in M) + "]"
        trace = f"{self.trace.real:.13g}{self.trace.imag:+.1e}i" if isinstance(self.trace, complex) else f"{self.trace:.15g}"
        lines += [
            f"  class               {self.orbit_class}",
            f"  trace               {trace}   (error ~{self.error:.0e}, {self.steps} steps)",
            f"  {self.matrix_name:<20}{shown}",
        ]
        if self.rotation_number is not None:
            # 12 digits: the propagated matrix is good to ~1e-13, not to the last bit
            lines.append(f"  rotation number     {self.rotation_number:.12g}")
        lines += [f"  {k.replace('_', ' '):<20}{_number(v)}" for k, v in self.details.items()]
        agree = "agree" if self.stabilizers_agree else "DISAGREE (near a degenerate value, or under-resolved)"
        lines.append(
            f"  stabilizer dim      {self.stabilizer_dim} ({self.stabilizer_method}), {self.stabilizer_dim_fourier} "
            f"(Fourier kernel): {agree}; bases agree to {self.stabilizer_agreement:.1e}"
        )
        rep = "none" if self.representative is None else f"{self.representative_label} = {self.representative:.12g}"
        lines.append(f"  constant on orbit   {rep}  ({self.representative_note})")
        if self.warning:
            lines.append(f"  warning: {self.warning}")
        return "\n".join(lines)

    __str__ = text

    # ------------------------------------------------------------- report
    def _result(self, name, residual, tolerance, ok, bad, status=None):
        if status is None:
            status = "pass" if residual <= tolerance else "fail"
        words = {"method": self.stabilizer_method, "matrix": self.matrix_name}
        return CheckResult(name, status, residual, tolerance, None, ok if status != "fail" else bad, 1,
                           statement=_STATEMENTS[name].format(**words), replay=self.replay)

    def report(self) -> Report:
        """The self-consistency checks as a :class:`hamcheck.Report` (``passed``, ``explain()``, ``to_json()``)."""
        results = {
            "stabilizers_agree": self._result(
                "stabilizers_agree", float(self.stabilizer_agreement), TOLERANCES.stabilizer_agreement,
                f"dimension {self.stabilizer_dim} both ways",
                f"the {self.stabilizer_method} give dimension {self.stabilizer_dim}, the Fourier kernel "
                f"{self.stabilizer_dim_fourier} (bases apart by {self.stabilizer_agreement:.1e}): the data are near a "
                "degenerate value or the Fourier truncation is too coarse (raise the number of modes)",
            ),
            "propagator_error": self._result(
                "propagator_error", float(self.error), TOLERANCES.propagator_trust,
                f"{self.matrix_name} known to {self.error:.0e} ({self.steps} steps)",
                f"the {self.matrix_name} is known only to {self.error:.1e}: the class and stabilizer decisions may be "
                "wrong; tighten the propagator's tolerance",
            ),
        }
        if self.representative is None or self.representative_trace is None:
            results["constant_trace"] = self._result(
                "constant_trace", None, TOLERANCES.representative_trace, "no constant on this orbit", "", status="skip")
        else:
            tr = complex(self.trace).real
            r = abs(self.representative_trace - tr) / max(abs(tr), 1.0)
            results["constant_trace"] = self._result(
                "constant_trace", r, TOLERANCES.representative_trace,
                f"{self.representative_label} = {self.representative:.12g} has the measured trace",
                f"{self.representative_label} = {self.representative:.12g} has trace {self.representative_trace:.12g}, "
                f"the data {tr:.12g}: the representative is not on this orbit",
            )
        diagnoses = ()
        if self.warning:
            diagnoses = (Finding("under-resolved", self.warning, {"spectral_tail": self.spectral_tail}, "", self.replay),)
        return Report(
            model=f"{self.family} classification" + (f" of {self.source}" if self.source else ""),
            source=self.source, seed=0, points=self.samples or 1, derivatives="spectral (trigonometric interpolant)",
            results=results, diagnoses=diagnoses,
        )


def format_classification(d: OrbitClassification) -> str:
    """Plain-text rendering of a classification (``d.text()``; the name both classifiers exported)."""
    return d.text()
