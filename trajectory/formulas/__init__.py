"""Published formulas, vectorised and free of I/O: EurOtop (2018) overtopping and run-up
(hydraulics.py), Bligh, Lane and Sellmeijer piping (piping.py), frequency lines
(frequency.py).

May import only the top-level errors.
"""
