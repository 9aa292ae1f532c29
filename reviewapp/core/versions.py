"""Version of the automatic-marks engine, importable without loading the signal stack.

Sidecars and the worklist compare it with the version that made stored automatic marks; a
worklist must be able to do that without importing SciPy.
"""

from reviewapp import __version__

ENGINE_VERSION = __version__
