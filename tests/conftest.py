import sys
from pathlib import Path

# the oracle and other test helpers are imported as plain modules
sys.path.insert(0, str(Path(__file__).parent))
