"""The full analysis of a batch of readings: one reading or a million, same code.

Input is a mapping of reading field name -> 1-D float array (NaN where the
field was not entered), plus per-reading system codes and voltage-standard
codes.  Output is an :class:`Analysis`: a mapping of result name -> array
(NaN where the input cannot give the quantity) and the findings as masks.

Which voltages feed which result (see :mod:`fieldpad.core` for conventions):

* ``wye`` (3-phase 4-wire): sequence components of the line-to-neutral
  phasors when the three angles are entered; otherwise from line-to-line
  phasors or, failing that, line-to-line magnitudes (then V0 is unknown).
* ``delta`` (3-phase 3-wire, measured line-to-line) and ``high-leg-delta``:
  sequence components of the line-to-line set, reported as
  line-to-neutral-equivalent (30-degree shift, V0 unknown).  For the high-leg
  delta the line-to-neutral readings (to the centre tap) give the high leg,
  the per-phase power and the neutral.
* ``split-phase`` (120/240 V): legs A and B only; no sequence components or
  rotation; leg unbalance, neutral and power.

This module computes the quantities; the findings are defined one by one in
:mod:`fieldpad.core.registry` (the rule modules ``rules_voltage`` and
``rules_current``), which read them from the namespace ``q`` built here.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from . import registry
from .quantities import (
    BASIS_LL,
    BASIS_LN,
    BASIS_MAG,
    BASIS_NAMES,
    BASIS_NONE,
    currents,
    inputs,
    power,
    values,
    voltages,
)
from .quantities import nominal as nominal_and_high_leg
from .thresholds import Thresholds

__all__ = [
    "Analysis",
    "analyze",
    "analyze_block",
    "default_workers",
    "BLOCK",
    "BASIS_NAMES",
    "BASIS_NONE",
    "BASIS_LN",
    "BASIS_LL",
    "BASIS_MAG",
]


@dataclass
class Analysis:
    """Results of :func:`analyze`.

    ``values`` maps result name -> array of length N.  ``findings`` is a list
    of ``(code, severity, mask, value, threshold, unit, phase)``: ``mask`` is a
    bool array of length N; ``value``, ``threshold`` and ``phase`` (index 0..2,
    -1 for none) are each a number (the same for every reading), the name of a
    result in ``values``, or an array of length N that is meaningful only
    where ``mask`` is True (see :meth:`finding_field`).
    """

    n: int
    values: dict = field(default_factory=dict)
    findings: list = field(default_factory=list)

    def __getitem__(self, key):
        return self.values[key]

    def finding_field(self, item):
        """A finding's value, threshold or phase as an array of length N."""
        if isinstance(item, str):
            item = self.values[item]
        return np.broadcast_to(item, (self.n,))


#: Readings analysed per block: small enough that a block's arrays stay in the
#: processor's cache, large enough that numpy's per-call overhead is amortised.
BLOCK = 16_384


def default_workers() -> int:
    """Threads for a large batch: one per processor this process may run on, at
    most 8 (numpy releases the interpreter lock inside each array operation, so
    blocks run in parallel)."""
    try:
        cpus = len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        cpus = os.cpu_count() or 1
    return max(1, min(8, cpus))


def analyze(cols, system, standard=None, thresholds: Thresholds | None = None, workers: int | None = None) -> Analysis:
    """Analyse N readings (see :func:`analyze_block`) in cache-sized blocks.

    Large batches are split into blocks of ``BLOCK`` readings, analysed on
    ``workers`` threads (default :func:`default_workers`) and written into
    one set of output arrays.  A finding's per-reading value, threshold and
    phase are written only where its mask is set; the rest of those arrays
    stays zero (see :class:`Analysis`).  The result is the same as one
    :func:`analyze_block` call on the whole batch.
    """
    system = np.asarray(system, dtype=np.int8)
    n = system.shape[0]
    if n <= 2 * BLOCK:
        return analyze_block(cols, system, standard, thresholds)
    cols = {k: np.asarray(v, dtype=float) for k, v in cols.items()}
    std = None if standard is None else np.asarray(standard, np.int8)
    bounds = [(lo, min(n, lo + BLOCK)) for lo in range(0, n, BLOCK)]

    def block(lo, hi):
        return analyze_block(
            {k: v[lo:hi] for k, v in cols.items()}, system[lo:hi], None if std is None else std[lo:hi], thresholds
        )

    first = block(*bounds[0])
    values = {k: np.empty(n, np.asarray(v).dtype) for k, v in first.values.items()}

    def out_like(item, dtype):
        # A number or a result name is shared by every block; an array is
        # filled in only where the finding is raised.
        return item if isinstance(item, str) or np.ndim(item) == 0 else np.zeros(n, dtype)

    findings = [
        (code, sev, np.empty(n, bool), out_like(v, float), out_like(t, float), unit, out_like(p, np.int8))
        for code, sev, _m, v, t, unit, p in first.findings
    ]

    def run(bound):
        _store_block(values, findings, *bound, block(*bound))

    _store_block(values, findings, *bounds[0], first)
    workers = default_workers() if workers is None else max(1, int(workers))
    if workers == 1:
        for bound in bounds[1:]:
            run(bound)
    else:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            for _ in pool.map(run, bounds[1:]):
                pass
    return Analysis(n=n, values=values, findings=findings)


def _store_block(values: dict, findings: list, lo: int, hi: int, part: Analysis) -> None:
    """Write one block's results into the batch's output arrays (see :func:`analyze`)."""
    for k, v in part.values.items():
        values[k][lo:hi] = v
    for dst, src in zip(findings, part.findings):
        mask = src[2]
        dst[2][lo:hi] = mask
        if not mask.any():
            continue
        for k in (3, 4, 6):
            if isinstance(dst[k], np.ndarray):
                item = part.values[src[k]] if isinstance(src[k], str) else src[k]
                dst[k][lo:hi][mask] = np.broadcast_to(item, mask.shape)[mask]
            elif not (isinstance(src[k], str) or np.ndim(src[k]) == 0):
                raise RuntimeError(f"finding {dst[0]}: field {k} changed kind between blocks")


def analyze_block(cols, system, standard=None, thresholds: Thresholds | None = None) -> Analysis:
    """Analyse N readings.

    Parameters
    ----------
    cols : mapping of str -> array_like, each shape (N,)
        Reading fields (see ``ANALYSIS_COLUMNS``): magnitudes in V or A,
        angles in degrees; NaN where not entered.
    system : array_like of int, shape (N,)
        System code per reading (``SYSTEMS``).
    standard : array_like of int, shape (N,), optional
        0 = ANSI C84.1, 1 = IEC 60038 per reading (default ANSI).
    thresholds : Thresholds, optional

    Returns
    -------
    Analysis

    Notes
    -----
    Each phase is kept as its own 1-D array (structure of arrays): numpy is
    much faster on long 1-D arrays than on reductions over a short last axis.
    """
    th = thresholds or Thresholds()
    q = inputs(cols, system, standard)
    voltages(q, th)
    currents(q, th)
    power(q)
    nominal_and_high_leg(q)
    return Analysis(n=q.n, values=values(q), findings=registry.evaluate(q, th))
