"""Shared helpers of the core tests (``aps_problems.py``) are imported by name, so this folder is put on
``sys.path`` (the suite imports test files with ``--import-mode=importlib``, which does not do it)."""

from __future__ import annotations

import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
if HERE not in sys.path:
    sys.path.insert(0, HERE)
