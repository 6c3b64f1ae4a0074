"""Pure computation layer of fieldpad (numpy only: no UI, no SQLite, no file I/O).

Conventions used by every module in this package
------------------------------------------------
* Magnitudes are RMS values: volts (V) and amps (A).
* Angles are in degrees, counter-clockwise positive, so a lagging quantity has a
  negative angle.  All angles of one reading share one reference, normally the
  phase-A line-to-neutral voltage at 0 degrees.  240 and -120 are the same
  angle; results are wrapped to the interval (-180, 180].
* ABC sequence (positive rotation) means phase B lags phase A by 120 degrees
  and phase C lags B by 120 degrees.
* The operator ``a = 1∠120°``.  Symmetrical components use the
  amplitude-invariant Fortescue transform ``V1 = (Va + a·Vb + a²·Vc) / 3``.
* Line-to-line phasors are ``Vab = Va − Vb`` etc.  For a positive-sequence
  set, ``Vab1 = √3·Va1∠+30°``; for negative sequence ``Vab2 = √3·Va2∠−30°``.
  This is the "30-degree shift convention" used when a 3-wire system measured
  line-to-line only is reported as line-to-neutral-equivalent quantities.

Every function accepts array_like input and broadcasts, so one reading or a
million go through the same code.  A quantity that the input cannot give is
NaN in the arrays (and ``null`` at the edges of the program), never a made-up
number.
"""
