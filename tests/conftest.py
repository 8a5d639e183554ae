import sys
from pathlib import Path

# tests import the reference helpers beside them
sys.path.insert(0, str(Path(__file__).parent))
