import sys

from floorfit.cli import main

sys.exit(main())
