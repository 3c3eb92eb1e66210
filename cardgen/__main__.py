"""Allow ``python -m cardgen``."""

import sys

from cardgen.cli import main

sys.exit(main())
