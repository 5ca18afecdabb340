"""Field models: the registry and the recipe for adding one.

How to add a field model
------------------------
1. Write a module here with a kind code ``NAME = <next integer>`` and one
   ``@njit(**LEAF)`` evaluator ``f(p, x, y, z, t) -> (Ex, Ey, Ez, Bx, By, Bz)``
   in SI, reading its parameters from the float64 row ``p`` (at most
   ``config.FIELD_PARAMS`` slots). Cite the formula's source in its docstring.
2. Describe its inputs with a ``FieldModel`` (``Param`` entries carry the
   dimension, default and docs; ``pack`` turns SI values into the row;
   ``check`` adds cross-parameter validation).
3. Register it: add the model to ``MODELS`` below and one ``elif`` branch to
   ``tracker.fields.evaluate.field_at``.
4. Add a test against a published formula; the lab's field composer and the
   scenario schema pick the model up from this registry with no further edits.
"""

from . import expression, fieldmap, gaussian_beam, laser, static, tokamak, undulator
from .base import ABSENT, REQUIRED, FieldModel, Param

MODELS = {
    m.name: m
    for m in (
        static.UNIFORM_MODEL,
        static.MIRROR_MODEL,
        static.DIPOLE_MODEL,
        undulator.MODEL,
        laser.MODEL,
        tokamak.MODEL,
        fieldmap.MODEL,
        gaussian_beam.MODEL,
        expression.MODEL,
    )
}

__all__ = ["MODELS", "FieldModel", "Param", "REQUIRED", "ABSENT"]
