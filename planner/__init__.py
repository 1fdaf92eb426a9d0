"""planner: ward capacity planning under uncertain demand.

The Python interface (:mod:`planner.api`): ``load_scenario``, ``run``, ``compare``, ``size``,
``hindcast``, for several wards ``run_hospital``, ``compare_hospitals`` and ``size_hospital``,
and ``write_report``; a scenario's keys change with ``Scenario.with_changes``.
Importing ``planner`` loads only this list; each function imports what it needs when called.
"""

__version__ = "0.1.0"

__all__ = ["compare", "compare_hospitals", "hindcast", "load_scenario", "run", "run_hospital",
           "size", "size_hospital", "write_report"]  # fmt: skip


def __getattr__(name: str):
    """The interface's functions, imported on first use (so ``import planner`` stays light
    for the command line)."""
    if name in __all__:
        from planner import api

        return getattr(api, name)
    raise AttributeError(f"module 'planner' has no attribute {name!r}")
