"""A strict JSON reader for the tests: NaN and Infinity are not JSON (RFC 8259, section 6)."""

import json


def _refuse(word):
    raise ValueError(f"non-standard JSON constant {word}")


def strict_loads(text):
    """json.loads that raises on NaN / Infinity / -Infinity (RFC 8259, section 6)."""
    return json.loads(text, parse_constant=_refuse)
