"""Exoledger calculations: pure-Python thermal-safety methods in SI floats.

The package imports nothing heavy at import time; import the method modules
(``calcs.tmr``, ``calcs.scenario`` ...) where they are needed.
"""

__version__ = "0.3.0"
