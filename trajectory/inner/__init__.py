"""The inner side: piping screened per station and inner-slope stability by Bishop's circles,
with piping and stability berms as remedies.

May import formulas, terrain and judgement.status.
"""
