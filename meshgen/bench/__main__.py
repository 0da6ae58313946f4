"""``python -m meshgen.bench`` runs the benchmark (see the package docstring)."""

import sys

from .run import main

sys.exit(main())
