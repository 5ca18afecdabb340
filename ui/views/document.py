"""Changing Bokeh models safely from any Panel callback.

Panel runs some widget callbacks without holding the Bokeh document lock; a
direct change to a Bokeh model there raises "_pending_writes should be non-None".
Views therefore hand their model edits to ``apply_to_models``, which schedules
them on the session's next tick (under the lock), or runs them at once when
there is no server session (tests, notebooks).
"""

import panel as pn


def apply_to_models(change):
    """Run ``change()`` (edits Bokeh models) under the session's document lock.

    Parameters
    ----------
    change : callable() -> None
    """
    pn.state.execute(change, schedule=True)
