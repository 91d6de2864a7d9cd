"""Defaults of a measurement's settings, in a module of their own: the command line shows them
(option defaults, ``--help``) and builds its settings before any measuring module is loaded, so a
worker process can load those after it is forked, beside the parent's own start."""

#: Default relative tolerance per segment (the integrator's target; see :mod:`pathlen.measure`).
DEFAULT_RTOL = 1e-9
#: Default join tolerance in millimetres: segment ends this close on one layer meet (see :mod:`pathlen.contours`).
DEFAULT_JOIN_TOL_MM = 0.01
#: Default most segments a drawing may be expanded to (``--max-segments``; see :mod:`pathlen.instances`).
DEFAULT_MAX_SEGMENTS = 10_000_000
