"""The cache a screening run's re-runs share (a sensitivity): see :class:`RunCache`.

Its own module so that ``screen`` and ``sensitivity`` both use it without importing each other.
"""

from __future__ import annotations

import hashlib
import pickle


class RunCache:
    """What the re-runs of one scenario (a sensitivity) share: the habitat layer as read and
    each source's unit concentration at a set of points. An entry is keyed by a digest of
    everything it depends on (inputs, tables, settings, weather, points), so a re-run that
    changes any of them computes afresh; one that changes only emissions (the emission-factor
    and abatement variants: the concentration is linear in the emission) reuses the
    dispersion."""

    def __init__(self) -> None:
        self._store: dict[bytes, object] = {}

    def get(self, key_parts: tuple, compute):
        """The cached value of ``key_parts``, computed by ``compute()`` the first time.

        Parameters
        ----------
        key_parts : tuple
            Everything the value depends on (picklable); hashed to the key.
        compute : callable
            Makes the value when it is not cached.

        Returns
        -------
        object
            The value.
        """
        key = hashlib.blake2b(pickle.dumps(key_parts, protocol=5), digest_size=20).digest()
        if key not in self._store:
            self._store[key] = compute()
        return self._store[key]
