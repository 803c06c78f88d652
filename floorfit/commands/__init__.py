"""Stage 9, the command line: sub-commands of ``floorfit``, one thin module each (discovered automatically).

Each module parses its options, calls the library and prints; no analysis lives here.
May import: everything in the package.
"""
