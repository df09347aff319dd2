"""The caution every hazard figure travels with, in one wording for every way out.

The command line, the API, the admin, the pages and the printed documents all show this
text; none of them words it again.
"""
from __future__ import annotations

CAUTION = ("These figures support, and never replace, the judgement of your laser safety officer (LSO), local "
           "codes and regulations, and licensed practice. Check every input against the data sheet and the "
           "installed beam path before relying on a distance or an eyewear rating.")
