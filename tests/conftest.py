"""Puts tests/ on sys.path so every test folder can import the shared ``samples`` module."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
