"""The one exception users see for bad input."""


class ScenarioError(ValueError):
    """Invalid scenario input; the message names the key path, e.g. ``field[1].wavelength``."""

    def __init__(self, key, message):
        self.key = key
        self.message = message
        super().__init__(f"{key}: {message}" if key else message)
