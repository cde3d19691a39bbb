"""The command line and the desktop-GIS processing tool: thin shells over trajectory.assess,
generated from params and inputs.input_table.

May import everything below; nothing imports them.
"""
