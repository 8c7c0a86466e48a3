"""Where numba keeps the package's compiled functions.

numba's on-disk cache is keyed on each function's own source file, so a
change in one module can leave stale machine code for compiled callers in
another.  The cache therefore lives in a folder named after a hash of all the
package's source files: any edit, or a new release, starts a fresh cache.
"""

import hashlib
import os
from pathlib import Path


def source_digest(package_dir):
    h = hashlib.sha256()
    for path in sorted(Path(package_dir).rglob("*.py")):
        h.update(path.relative_to(package_dir).as_posix().encode())
        h.update(path.read_bytes())
    return h.hexdigest()[:16]


def configure(package_dir):
    import numba
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    folder = Path(base) / "analyser" / f"numba-{source_digest(package_dir)}"
    try:
        folder.mkdir(parents=True, exist_ok=True)
        _prune(folder.parent, keep=folder)
    except OSError:
        return            # read-only home: numba falls back to its default
    numba.config.CACHE_DIR = str(folder)


def _prune(parent, keep, days=7.0):
    """Remove caches of other source versions unused for `days`."""
    import shutil
    import time
    for other in parent.glob("numba-*"):
        if other != keep and time.time() - other.stat().st_mtime > days * 86400:
            shutil.rmtree(other, ignore_errors=True)
