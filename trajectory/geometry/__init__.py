"""Stations along the line and the cross-sections cut at them: chainage, perpendicular section
points, their DEM pixel windows.

Pure geometry. May import only the top-level errors.
"""
