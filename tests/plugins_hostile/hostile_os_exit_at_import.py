"""Ends the process at once, without cleanup, while being imported."""
import os

os._exit(0)
