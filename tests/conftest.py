import sys
from pathlib import Path

# Test helpers (tests/builders.py) are imported as a plain module.
sys.path.insert(0, str(Path(__file__).parent))
