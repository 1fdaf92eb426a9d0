"""Command-line interface: thin commands that parse options, call one library function and
print or write its result. Every user error is one line on stderr and exit status 2.

The group and shared options are in :mod:`planner.cli.base`, the commands in
:mod:`planner.cli.forecasting`, :mod:`planner.cli.planning` and :mod:`planner.cli.sizing`;
they are added to the group here."""

import gc
import os

from planner.allocator import keep_freed_memory
from planner.cli.base import cli
from planner.cli.forecasting import backtest, check, forecast
from planner.cli.planning import compare, hindcast, run, simulate
from planner.cli.sizing import size

for command in (check, forecast, backtest, simulate, run, compare, size, hindcast):
    cli.add_command(command)

#: BLAS threads: the matrices here are small, and threaded BLAS on them is slower, badly so
#: on a busy machine; parallel work is done across paths instead. A user's setting wins.
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")

#: Allocations between two runs of the cyclic garbage collector's youngest generation (Python's
#: default is 700). planner's data are arrays, freed by reference counting as soon as they are
#: dropped; at the default the collector kept walking the few hundred thousand long-lived objects
#: that numpy, pandas, matplotlib and numba create, about 0.3 s of a `planner run` on the demo.
GC_THRESHOLD = 50_000


def main() -> None:
    """Console-script entry point."""
    for name in BLAS_THREAD_VARIABLES:
        os.environ.setdefault(name, "1")
    keep_freed_memory()
    gc.set_threshold(GC_THRESHOLD)
    try:
        cli(prog_name="planner")
    finally:
        # The process ends here: objects left are released with it. Frozen, they are not
        # walked again by the collections of interpreter shutdown (about 0.5 s on the demo).
        gc.freeze()


__all__ = ["cli", "main"]
