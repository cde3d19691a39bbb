"""The invented demo scenario and synthetic levees for tests and benchmarks. Not part of the
assessment: nothing in the pipeline imports it.

May import formulas and the top-level errors.
"""
