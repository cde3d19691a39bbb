"""The crest's requirement per station: the required crest level by the chosen method, the
characteristic outer slope from the profile, and the return period the crest holds.

May import formulas and terrain.
"""
