"""Reference values and formulas from outside sources, one module per source family."""
