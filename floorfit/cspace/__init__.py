"""Stage 3, the configuration space: free space per heading slice and the roadmap that links them.

Owns Minkowski sums (:mod:`.minkowski`), the heading circle and heading cells
(:mod:`.headings`), sound and optimistic slices (:mod:`.slices`), incremental updates after a
local layout change (:mod:`.incremental`), slice sets shared within one run (:mod:`.slicememo`),
single-pose and motion checks (:mod:`.collision`), the heading-aware roadmap (:mod:`.roadmap`), paths
inside one cell (:mod:`.cellpath`), rasters (:mod:`.raster`) and problem-size limits (:mod:`.sizelimits`).
May import: :mod:`floorfit.vehicles`, :mod:`floorfit.plan`, :mod:`floorfit.errors`.
"""
