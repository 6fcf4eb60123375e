"""riskcalc: flood, dam and levee risk from an ensemble of frequency curves.

Results are screening support for qualified, licensed engineers; the governing
agency's current policy and local codes decide.
"""

__version__ = "0.1.0"
