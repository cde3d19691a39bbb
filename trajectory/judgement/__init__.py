"""From margin to verdict and beyond: status and stretches, uncertainty, known structures,
year-over-year epochs and changes, remedies and the economic optimum.

May import formulas, geometry, terrain, requirement and the top-level errors.
"""
