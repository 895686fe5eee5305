"""A cache keyed on the identity of its arguments.

The stage results are large frozen records; hashing them by value costs more than the work
a cache saves, and within one audit the same objects are passed again and again.  The
arguments are kept alive by the cache, so an identity is never reused while cached.
"""
from __future__ import annotations

import functools


def remember(cache: dict, key, value, limit: int) -> None:
    """Store ``key -> value``, first dropping the oldest entry when ``limit`` are held (a long
    sweep or batch must not grow memory without bound)."""
    if len(cache) >= limit:
        cache.pop(next(iter(cache)))
    cache[key] = value


def by_identity(build):
    """Decorator: remember the last 16 results, keyed on the identity of the arguments."""
    cache: dict = {}

    @functools.wraps(build)
    def cached(*args):
        key = tuple(id(a) for a in args)
        if key not in cache:
            remember(cache, key, (args, build(*args)), 16)
        return cache[key][1]
    return cached
