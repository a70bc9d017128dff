"""python -m sdmnet"""

import sys

from sdmnet.cli import main

sys.exit(main())
