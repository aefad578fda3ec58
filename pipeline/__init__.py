"""realbasis engine: pure functions from pandas objects to frozen result objects.

This package never imports dash, flask or plotly (tests/test_architecture.py proves it).
"""

__version__ = "0.1.0"
