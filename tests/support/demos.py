"""The demo cases and how many realisations the shared demo runs use."""
from pathlib import Path

CASES = Path(__file__).resolve().parents[2] / "cases"
DEMO_REALISATIONS = 40  # structure and consistency checks, not statistics
