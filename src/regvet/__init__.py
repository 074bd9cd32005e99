"""regvet: finds missing and failed specification checks around OLS fits.

The static core (``regvet.model``, ``regvet.sources``, ``regvet.analysis``,
``regvet.rules``, ``regvet.engine``) uses only the standard library. Fronts
(``regvet.cli`` and later the language server) are thin adapters over it.
"""

__version__ = "0.1.0"
