"""masstrail's core: models, hook specifications, plugin manager and pipeline.

The library never imports the command line (``capture.cli``).
"""

__version__ = "0.1.0"
