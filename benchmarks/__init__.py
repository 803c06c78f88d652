"""Performance benchmarks of floorfit (not part of the test run).

Run ``python -m benchmarks.run --help``. The sites are synthetic warehouses drawn by
:mod:`benchmarks.warehouse` (invented data); results go to ``benchmarks/results/``.
"""
