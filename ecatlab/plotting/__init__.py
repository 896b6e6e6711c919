"""Plotting layer of ecatlab: draws what the engine computed, never computes physics itself.

Every public function takes an optional ``ax=`` and returns the Axes (or Figure). matplotlib is
imported only when this package is used.
"""
