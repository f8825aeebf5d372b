"""Pure physics of amplifier output stages in a circuit (numpy only).

No database, command-line or UI imports are allowed here: the functions take plain dataclasses
and numpy arrays with parts along the first axis, and return frozen dataclasses of arrays.
"""
