"""The mapsection command line: one command per module, each a thin wrapper over the library."""

import os

# One BLAS thread per process unless the user says otherwise. The construction's least-squares
# fits are small dense problems: with OpenBLAS's threads on a laptop's few cores, shared with
# the parallel section workers, the same SVDs took 22x longer than on one thread
# (docs/performance.md, "The world benchmark"). Set before numpy is first imported.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
