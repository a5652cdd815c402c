"""commission: commission a solar surplus diverter and hand over a record others can trust."""

import os as _os

# The numerical work here is many small matrix products (one per mains window, about
# 40 x 4000 by 4000 x 4). Multi-threaded BLAS gains nothing on products that size, and on
# a machine whose cores are busy its threads spin and wait: the capture analysis measured
# 10x slower (3.5 s instead of 0.36 s for a 2-minute capture) with two cores loaded. One
# thread is set before numpy is first imported, unless the user chose otherwise.
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    _os.environ.setdefault(_name, "1")

__version__ = "0.1.0"
