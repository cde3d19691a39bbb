"""The terrain model read along each section and the profile read from it: fill values and
vertical units, crest, edges, slope segments, berms, toes; and a
hillshade of the ground near the line for the report's map (hillshade.py).

May import formulas and the top-level errors; the toe and crest rules live in
profile_sides.py, their assembly per station in profile.py.
"""
