"""How a run is carried out (trajectory.assess is its entry): chunk tasks on serial, process or
Dask executors, faults contained, run diagnosis.

May import only the top-level errors; assess.py calls the stages.
"""
