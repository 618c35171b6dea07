"""Ends the process with status 0 while being imported."""
import sys

sys.exit(0)
