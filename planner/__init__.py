"""planner: ward capacity planning under uncertain demand."""

__version__ = "0.1.0"
