"""Stage 1, the plan: what is on the floor, in metres.

Owns the obstacle model (:mod:`.model`: walls, solids, doorways, labels, height ranges, the
local frame), stations (:mod:`.stations`), site files (:mod:`.site`) and the DXF importer
(:mod:`.dxf`). Everything past this package sees metres in one local frame.
May import: :mod:`floorfit.errors`, :mod:`floorfit.tomlcheck` and third-party libraries only.
"""
