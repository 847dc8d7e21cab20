"""Suite-wide setup: caches go to a throwaway folder, never the user's."""

import os
import tempfile

os.environ.setdefault("XDG_CACHE_HOME", tempfile.mkdtemp(prefix="clipscribe-test-cache-"))
os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
