"""Stage 2, the vehicles: outlines, margins, heights and motion modes read from files.

Owns rigid vehicles (:mod:`.rigid`), train files (:mod:`.train`: a tractor and its cart as a
file format, not their kinematics), outlines from VDA 5050 factsheets (:mod:`.factsheet`) and
the one entry point that reads any vehicle file (:mod:`.loading`). Loading any vehicle file
goes through here.
May import: :mod:`floorfit.plan` (vehicle outlines drawn in a DXF), :mod:`floorfit.tomlcheck`,
:mod:`floorfit.errors`.
"""
