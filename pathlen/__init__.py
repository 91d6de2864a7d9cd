"""pathlen: exact path lengths from drawings, with stated error bounds."""

__version__ = "0.1.0"

#: The thread-count variables of OpenBLAS, MKL and BLIS, read when the library is loaded (the command line
#: sets them to 1 before numpy loads; see :func:`pathlen.batch.single_blas_thread`).
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS")
