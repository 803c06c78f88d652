from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SHARED = ROOT.parent / "shared"
PLANS_REAL = SHARED / "plans-real"


@pytest.fixture
def plans_real() -> Path:
    if not PLANS_REAL.is_dir():
        pytest.skip(f"real drawings not found at {PLANS_REAL} (../shared beside the checkout)")
    return PLANS_REAL

# the slice cache stays out of the user cache folder during tests (tests that use it pass a folder)
import os  # noqa: E402

os.environ.setdefault("FLOORFIT_CACHE", "off")
