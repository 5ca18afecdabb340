"""The runs a lab comparison holds: one result per radiation-reaction model, in the engine's order.

A lab run is ``tracker.compare(scenario, models=...)`` with the models the user ticked; the
views draw whatever models it holds, each in its fixed style (``palette.MODEL_STYLES``).
"""

from tracker.engine import MODEL_ORDER


def runs_of(comparison):
    """{model: Result or BeamResult} of a ``tracker.Comparison``, in ``MODEL_ORDER`` ({} for None)."""
    results = getattr(comparison, "results", None) or {}
    return {model: results[model] for model in MODEL_ORDER if results.get(model) is not None}


def reference_model(comparison):
    """The model whose run sets what the views share (start point, time slider, spectrum method).

    The damped run of the classic pair when it was run, else the first model with a reaction
    force, else the first model run; None for an empty comparison.
    """
    runs = runs_of(comparison)
    damped = getattr(comparison, "damped", None)
    for model, result in runs.items():
        if result is damped:
            return model
    for model in runs:
        if model != "none":
            return model
    return next(iter(runs), None)


def reference_run(comparison):
    """The run of ``reference_model`` (None for an empty comparison)."""
    model = reference_model(comparison)
    return None if model is None else runs_of(comparison)[model]
