"""The one hash function of the static path: BLAKE2b.

``hashlib`` loads OpenSSL when it is imported (about 3 ms, a tenth of a one-file run); CPython's
own BLAKE2 module is the same algorithm without it. Used for the fact cache's keys and module
digests, where only equality matters (no published format depends on it).
"""

from __future__ import annotations

try:
    from _blake2 import blake2b
except ImportError:  # an interpreter without CPython's built-in module
    from hashlib import blake2b

__all__ = ["blake2b"]
