"""Allow ``python -m planner``."""

from planner.cli import main

if __name__ == "__main__":  # pragma: no cover
    main()
