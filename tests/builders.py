"""Small scenario builders shared by the physics tests (SI numbers throughout)."""

from tracker import Scenario


def scenario(fields, *, duration, particle, rr="none", **run):
    """A Scenario from plain dicts: ``fields`` list, ``particle`` dict, run options as keywords."""
    return Scenario.from_dict({
        "run": {"duration": duration, "radiation_reaction": rr, **run},
        "particle": particle,
        "field": fields,
    })


def electron(**momentum):
    """Electron at the origin with the given momentum keys (gamma=..., direction=...)."""
    return {"species": "electron", "position": [0.0, 0.0, 0.0], **momentum}
