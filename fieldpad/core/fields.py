"""The reading's field schema: system types, voltage standards, and the numeric fields a reading has.

Names are a public contract (``fieldpad compute``, import, export; README "Reading fields").  Magnitudes
are RMS volts and amps; ``*_deg`` fields are angles in degrees, counter-clockwise positive (see
:mod:`fieldpad.core`); ``va vb vc`` are line-to-neutral, ``vab vbc vca`` line-to-line; ``nominal_v`` is the
line-to-line nominal (240 for split-phase).
"""

from __future__ import annotations

from . import nominal

WYE, DELTA, HIGH_LEG, SPLIT = 0, 1, 2, 3
SYSTEMS = {"wye": WYE, "delta": DELTA, "high-leg-delta": HIGH_LEG, "split-phase": SPLIT}
STANDARDS = {nominal.ANSI: 0, nominal.IEC: 1}

V_LN = ("va", "vb", "vc")
V_LL = ("vab", "vbc", "vca")
I_PH = ("ia", "ib", "ic")
#: Every numeric reading field.
NUMERIC_FIELDS = (
    ("nominal_v",)
    + V_LN
    + tuple(f + "_deg" for f in V_LN)
    + V_LL
    + tuple(f + "_deg" for f in V_LL)
    + I_PH
    + tuple(f + "_deg" for f in I_PH)
    + ("i_n",)
)


#: Inputs beside the stored reading fields (``fieldpad compute``; README "Board inputs"): the board's main and
#: neutral ratings in A, and each phase's current angle from its own voltage (V-I displacement, degrees,
#: counter-clockwise positive: ``30 lag`` is -30), an alternative to the absolute ``i*_deg``.
RATING_FIELDS = ("rating_a", "neutral_rating_a")
VI_FIELDS = ("ia_vi_deg", "ib_vi_deg", "ic_vi_deg")
#: Board purpose (text in a record, a code in the analysis column ``purpose``; 0 or NaN: not given).
PURPOSES = {"distribution": 1, "motor": 2}
#: The site's expected rotation (text in a record, a code in the column ``expected_rotation``; ABC by default).
EXPECTED_ROTATIONS = {"abc": 1, "acb": -1}
#: Every column :func:`fieldpad.core.analysis.analyze` reads (missing ones are taken as not entered).
ANALYSIS_COLUMNS = NUMERIC_FIELDS + RATING_FIELDS + VI_FIELDS + ("purpose", "expected_rotation")
