"""python -m sdmnet"""

from sdmnet.cli import run

run()
