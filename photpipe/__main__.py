"""Allow ``python -m photpipe``."""

import sys

from photpipe.cli.main import main

sys.exit(main())
