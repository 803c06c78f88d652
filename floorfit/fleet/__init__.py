"""Stage 8, the fleet: every vehicle against every site, on local processes or a Dask cluster.

Owns the batch manifest and its runner (:mod:`.batch`) and the batch summary page and tables
(:mod:`.batch_html`).
May import: :mod:`floorfit.report` and everything below it.
"""
