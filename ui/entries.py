"""Text typed into an input <-> the raw value a scenario file holds.

An input holds either a plain number, taken as SI (``"1.43"``, ``"8e22"``), or a
quantity with units that the Scenario parses (``"1.5 T"``, ``"30 fs"``). Nothing is
converted here: the Scenario is the one place that reads units and validates.
"""

import re

_INTEGER = re.compile(r"^[+-]?\d+$")


def entry_to_raw(text):
    """Raw scenario value for the text of one input box.

    Parameters
    ----------
    text : str
        What the user typed.

    Returns
    -------
    int, float, str or None
        ``None`` for an empty box (the key is left out), an ``int`` or ``float``
        for a plain number (SI), otherwise the stripped text (a quantity with units,
        or something the Scenario will reject with a message naming the key).
    """
    text = (text or "").strip()
    if not text:
        return None
    if _INTEGER.match(text):
        return int(text)
    try:
        return float(text)
    except ValueError:
        return text


def raw_to_entry(value):
    """Text shown in an input box for a raw scenario value ('' for a missing one)."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value).lower()
    if isinstance(value, (int, float)):
        return repr(value)
    return str(value)


def vector_to_raw(texts):
    """Raw value of a three-box vector input: None when all boxes are empty.

    A partly filled vector keeps ``None`` in the empty places, so the Scenario
    reports the empty component by its key (e.g. ``field[0].B[1]``).
    """
    values = [entry_to_raw(t) for t in texts]
    if all(v is None for v in values):
        return None
    return values


def vector_entries(value):
    """Three box texts for a raw vector value (a list of three, or anything else)."""
    if isinstance(value, (list, tuple)) and len(value) == 3:
        return [raw_to_entry(v) for v in value]
    if value is None:
        return ["", "", ""]
    # a malformed value from a file: show it whole so the user sees what to fix
    return [raw_to_entry(value), "", ""]


def list_to_raw(text):
    """Raw value of a list input ("1 ns, 2.5 ns"): a list of raw values, None when empty."""
    parts = [part for part in (text or "").split(",") if part.strip()]
    return [entry_to_raw(part) for part in parts] if parts else None


def list_entry(value):
    """Box text of a raw list value."""
    if isinstance(value, (list, tuple)):
        return ", ".join(raw_to_entry(v) for v in value)
    return raw_to_entry(value)


def transverse_to_raw(text):
    """Raw value of a transverse input ("0.5 mrad", or "0.5 mrad, 1 mrad" for the two axes):
    one value, a list of the values typed (the Scenario names a wrong count), or None when empty."""
    values = list_to_raw(text)
    if values is None:
        return None
    return values[0] if len(values) == 1 else values
