"""deviation: check a DC wiring plan for the heading deviation it causes at a compass or magnetometer.

Layers, lowest first: ``field``, ``routing``, ``geomag``, ``heading`` (physics on arrays);
``plan`` and ``reader`` (the workbook); ``analysis`` and ``advice`` (budgets, hints, spots);
``render`` and ``cli`` (output). Lower layers never import upper ones, and nothing heavy is imported
here, so that ``import deviation`` and ``deviation --help`` stay quick.
"""

__version__ = "0.1.0"
