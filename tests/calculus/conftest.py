"""Test support for the calculus: makes the helper modules of this folder (the numeric oracle)
importable whatever import mode pytest runs in."""

import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
