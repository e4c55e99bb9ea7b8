"""Pure domain core: standard library only, no clock, no I/O.

Every function takes plain data (the dataclasses of ``planner.core.logbook``)
and returns plain data. ``as_of`` is always an argument.
"""
