"""The ward simulation: the ward model and run options, length of stay, arrival hours, every
random input drawn once per path, the SimPy ward model and the compiled engine, engine choice
and parallel chunks, staffing and the queueing formulas. The package itself imports nothing,
so reading a scenario (which needs only :mod:`planner.simulate.settings`) does not load the
ward model, its compiler or scipy.
"""
