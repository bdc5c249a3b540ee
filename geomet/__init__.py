"""geomet: drill-core data to ore domains, process forecasts, blend plans and testwork selection.

The public Python API, for notebook users, is collected here; the ``geomet`` command is a thin
layer over it.
"""

from __future__ import annotations

__version__ = "0.1.0"
