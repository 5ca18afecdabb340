"""The one exception users see for bad input."""

#: longest message shown: a pasted 100 kB value must not produce a 100 kB error line
#: (common practice, no source).
MAX_MESSAGE = 400
#: longest rendering of one offending value inside a message.
MAX_VALUE = 60


def brief(value, limit=MAX_VALUE):
    """``repr(value)`` cut to ``limit`` characters (with the length said), for messages."""
    try:
        text = repr(value)
    except Exception:  # a value whose repr fails must not turn a message into a crash
        text = f"<{type(value).__name__}>"
    if len(text) <= limit:
        return text
    return f"{text[: limit - 20]}... ({len(text):,} characters)"


def one_line(text, limit=MAX_MESSAGE):
    """Collapse line breaks and cut ``text`` to ``limit`` characters."""
    text = " ".join(str(text).split())
    if len(text) <= limit:
        return text
    return text[: limit - 30] + f" ... [{len(text) - limit + 30:,} characters cut]"


class ScenarioError(ValueError):
    """Invalid scenario input; the message names the key path, e.g. ``field[1].wavelength``.

    The message is one line of at most ``MAX_MESSAGE`` characters.
    """

    def __init__(self, key, message):
        self.key = one_line(key, 120)
        self.reason = one_line(message)
        super().__init__(one_line(f"{self.key}: {self.reason}" if self.key else self.reason))
        self.message = self.reason
