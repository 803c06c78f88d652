"""Sub-commands of the ``floorfit`` command line, one module each (discovered automatically)."""
