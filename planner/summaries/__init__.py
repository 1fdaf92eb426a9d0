"""Summaries of simulated paths: daily and shift tables, weekly measures, shares and means with
their Monte Carlo standard errors, paired differences between plans, hindcast scores.
Numerics only: pages and files are written by :mod:`planner.report`."""
