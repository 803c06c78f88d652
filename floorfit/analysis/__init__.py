"""Stage 5, the analysis: what a planner asks of a site, computed from the slices and roadmap.

Owns the site check as named stages (:mod:`.check`), passages and widths (:mod:`.passages`),
the floor clearance field (:mod:`.clearance_field`), turnability (:mod:`.turnability`),
findings, their ranking and place names (:mod:`.findings`, :mod:`.naming`), manoeuvre
findings for car-like bases (:mod:`.maneuvers`), size limits (:mod:`.sizing`) and layout
comparison (:mod:`.compare`).
May import: :mod:`floorfit.motion`, :mod:`floorfit.cspace`, :mod:`floorfit.vehicles`,
:mod:`floorfit.plan`, :mod:`floorfit.errors`. Never the report or the command line.
"""
