"""pathlen: exact path lengths from drawings, with stated error bounds."""

import os
import sys

__version__ = "0.1.0"

#: The thread-count variables of OpenBLAS, MKL and BLIS, read when the library is loaded (the command line
#: sets them to 1 before numpy loads; see :func:`pathlen.batch.single_blas_thread`).
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS")


def one_blas_thread_environment() -> None:
    """Set the BLAS thread variables to 1 where they are not set, if numpy is not loaded yet (the library
    reads them as numpy loads it): the workers then skip threadpoolctl's import and library scan (~5 ms of
    every run's start; see :func:`pathlen.batch.single_blas_thread`)."""
    if "numpy" not in sys.modules:
        for variable in BLAS_THREAD_VARIABLES:
            os.environ.setdefault(variable, "1")
