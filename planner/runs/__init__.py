"""The steps of a run, a comparison of plans and a hindcast: scenario and records -> forecast
paths -> ward simulation -> summaries, returned as result objects (:mod:`planner.results`)."""
