"""risk: probability of sand production and perforation-tunnel failure over the life of a well."""

from risk.kernel_cache import configure as _configure_kernel_cache

__version__ = "0.1.0"

# before numba compiles anything: a read-only install caches its kernels in the user's cache
_configure_kernel_cache()
