"""The model layer: component data, the ideal gas, the generalised cubic and
its parts, and the :class:`~eosfill.model.mixture.Mixture` they make up.

Depends on nothing in eosfill but ``eosfill.errors`` and ``eosfill.constants``.
"""

import os as _os


def _writable(path):
    """True if ``path`` exists (or can be made) and a file can be written in it."""
    import tempfile

    try:
        _os.makedirs(path, exist_ok=True)
        tempfile.TemporaryFile(dir=path).close()
        return True
    except OSError:
        return False


def _ensure_kernel_cache():
    """Give numba a writable cache folder for the compiled kernels.

    numba caches next to the source (``__pycache__``), else in the user's
    cache folder, and refuses ``cache=True`` (RuntimeError) when neither is
    writable (a read-only install and home).  Then use a per-user folder in
    the temporary directory, with a warning; no numba import here (``import
    eosfill`` stays light).
    """
    given = _os.environ.get("NUMBA_CACHE_DIR")
    if given and _writable(given):
        return
    here = _os.path.dirname(_os.path.abspath(__file__))
    tree = [_os.path.join(here, "__pycache__"), _os.path.join(_os.path.dirname(here), "equilibrium", "__pycache__")]
    if not given and all(_writable(p) for p in tree):
        return
    home = _os.path.join(_os.path.expanduser("~"), ".cache", "numba")
    if not given and _writable(home):
        return
    import sys
    import tempfile
    import warnings

    uid = getattr(_os, "getuid", lambda: "user")()
    folder = _os.path.join(tempfile.gettempdir(), f"eosfill-numba-cache-{uid}")
    if not _writable(folder):
        return  # nothing writable: numba will say so
    _os.environ["NUMBA_CACHE_DIR"] = folder
    if "numba" in sys.modules:
        sys.modules["numba"].config.CACHE_DIR = folder
    warnings.warn(f"no writable numba cache folder ({given or 'source tree and ~/.cache/numba'}); "
                  f"compiled kernels are cached in {folder}", RuntimeWarning, stacklevel=3)


_ensure_kernel_cache()
