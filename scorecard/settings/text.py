"""The text form of a settings value, as the settings file writes it: "text", 12, 0.5, true, [1, 2]."""

from __future__ import annotations

from typing import Any


def toml_value(value: Any) -> str:
    """Return a value as TOML text: "text", 12, 0.5, true, [1, 2]."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return _toml_float(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, (tuple, list)):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    raise TypeError(f"cannot write {value!r} to TOML")  # our own invariant


def _toml_float(value: float) -> str:
    # repr round-trips exactly; whole numbers are written without ".0" so hand-edited files stay tidy
    return repr(float(value)).removesuffix(".0")


def _toml_string(text: str) -> str:
    escaped = text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n").replace("\t", "\\t")
    # TOML allows no raw control characters in a basic string: U+0000 to U+001F and U+007F
    escaped = "".join(ch if ch >= " " and ch != "\x7f" else f"\\u{ord(ch):04x}" for ch in escaped)
    return f'"{escaped}"'
