"""What marks spanwise's own entities in a drawing: layer and block names, and the XDATA
application id. The reader skips them, so spanwise never reads its own output as drawing
content; ``strip`` removes exactly them.
"""

from __future__ import annotations

__all__ = ["OWN_PREFIX", "APPID", "is_own_name"]

#: Every layer and block definition spanwise writes starts with this (case-insensitive).
OWN_PREFIX = "SPANWISE-"
#: The XDATA application id on every entity spanwise writes.
APPID = "SPANWISE"


def is_own_name(name: str) -> bool:
    """Whether a layer or block ``name`` is one of spanwise's own.

    >>> is_own_name("spanwise-findings"), is_own_name("BELT")
    (True, False)
    """
    return name[:len(OWN_PREFIX)].upper() == OWN_PREFIX
