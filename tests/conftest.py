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

# orcscreen loads CoolProp on first use, without CoolProp's eager build of every fluid's
# superancillary curves, unless CoolProp is already loaded (orcscreen/properties.py). Several test
# modules import CoolProp themselves at collection, before any orcscreen call; load it the way
# orcscreen does first, so the suite runs the engine as a command-line run does.
from orcscreen import properties as _properties  # noqa: E402

_properties._load_coolprop()
