"""Test-session settings: orcscreen's on-disk cache goes to a fresh folder of this session
(removed at exit), so the suite never reads or writes the user's cache and always exercises the
computing path once."""

import atexit
import os
import shutil
import tempfile

from orcscreen.constants_cache import CACHE_DIR_ENV

_CACHE = tempfile.mkdtemp(prefix="orcscreen-test-cache-")
os.environ[CACHE_DIR_ENV] = _CACHE
atexit.register(shutil.rmtree, _CACHE, ignore_errors=True)
