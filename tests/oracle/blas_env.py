"""Numerical environment of the oracle scripts; import it before numpy and scipy.

* One BLAS/OpenMP thread: results do not depend on how work is split across threads.
* The OpenBLAS kernel set: OpenBLAS picks its kernels at run time from the CPU
  (DYNAMIC_ARCH), and different kernels round differently. The committed fixtures were
  generated with the SkylakeX (AVX-512) kernels of scipy's bundled OpenBLAS. With other
  kernels (an AMD machine picks Zen; an inherited OPENBLAS_CORETYPE may force Haswell) a
  --check run reports mismatches in quantities that are not unique (multi-input gains, where
  the solver's path depends on rounding) or sit at rounding level (placement errors ~1e-16).
  When the CPU has AVX-512 the SkylakeX set is pinned, which reproduces the fixtures bit for
  bit (seen: 0 of 84 465, 89 992, 1 065 and 19 116 numbers differ; with the Haswell kernels
  5 062, 106, 0 and 778 did, and with Zen the loop fixtures differed in the same 106). This
  overrides an OPENBLAS_CORETYPE inherited from the environment (machines here have been seen
  to set Haswell); set POLEWRIGHT_KEEP_BLAS_KERNEL=1 to keep it. Without AVX-512 the defaults
  stand and --check may report such differences; the Rust tests themselves do not depend on
  the kernel (they compare against the committed files).
"""

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
             "BLIS_NUM_THREADS", "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

if os.environ.get("POLEWRIGHT_KEEP_BLAS_KERNEL") != "1":
    try:
        with open("/proc/cpuinfo", encoding="ascii", errors="replace") as _f:
            if " avx512f" in _f.read():
                os.environ["OPENBLAS_CORETYPE"] = "SkylakeX"
    except OSError:
        pass
