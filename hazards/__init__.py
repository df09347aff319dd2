"""Laser hazard evaluation: exposure limits, hazard distances and eyewear ratings.

Pure Python and numpy. Nothing in this package imports Django; the register maps its
records onto these functions and stores what they return.
"""
from __future__ import annotations

ENGINE_VERSION = "0.2.0"
