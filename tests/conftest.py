"""Test-session settings: orcscreen's on-disk cache goes to a fresh folder of this session, so
the suite never reads or writes the user's cache and always exercises the computing path once."""

import os
import tempfile

from orcscreen.constants_cache import CACHE_DIR_ENV

os.environ[CACHE_DIR_ENV] = tempfile.mkdtemp(prefix="orcscreen-test-cache-")
