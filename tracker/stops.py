"""Why a run ended: one enum shared by the engine, the CLI, the lab and saved files.

``StopReason`` mixes in ``str`` so a reason compares equal to its value and goes into
JSON metadata (HDF5 ``meta_json``) as plain text; ``StopReason(text)`` reads it back.
"""

from enum import Enum


class StopReason(str, Enum):
    """How a run ended; only ``COMPLETED`` marks a run that reached its planned end."""

    COMPLETED = "completed"
    CANCELLED = "cancelled"
    NONFINITE = "nonfinite"
    MAX_STEPS = "max_steps"
    LEFT_DOMAIN = "left_domain"
    RADIATION_KICK_TOO_LARGE = "radiation_kick_too_large"
    ENERGY_BALANCE = "energy_balance"

    def __str__(self) -> str:
        return self.value

    @property
    def description(self) -> str:
        """One sentence for people (CLI summary, the lab's status line)."""
        return DESCRIPTIONS[self]

    @classmethod
    def of(cls, value) -> "StopReason | None":
        """The reason stored in ``value`` (an enum or its text); None when it is not one."""
        try:
            return cls(value)
        except ValueError:
            return None


DESCRIPTIONS = {
    StopReason.COMPLETED: "reached the end of the planned run",
    StopReason.CANCELLED: "cancelled; the states computed so far are kept",
    StopReason.NONFINITE: "stopped on non-finite values (NaN or Inf); the last good state is kept",
    StopReason.MAX_STEPS: "max_steps reached before the end of the run",
    StopReason.LEFT_DOMAIN: "the particle left the domain of a field model",
    StopReason.RADIATION_KICK_TOO_LARGE: "the radiation-reaction kick exceeded a safe fraction of the momentum "
                                         "in one step",
    StopReason.ENERGY_BALANCE: "the energy-balance residual exceeded its threshold",
}
