"""What the user gives, read and checked: centrelines, conditions and frequency tables, station
lists, earlier surveys, and the input files declared once.

Edge modules (they touch files). May import formulas, requirement, inner, judgement and the
top-level errors, params and checks; never pipeline, outputs or frontends.
"""
