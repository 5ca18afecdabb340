"""Views: field preview, orbit projections, time series, run summary, export, beam, photons.

Each view is a ``pn.viewable.Viewer`` watching a ``LabState``; plots keep one
ColumnDataSource per curve and only replace its ``.data``. Drawing data for
results is prepared on the run's worker thread (``prepare_drawing``), decimated
for drawing only; exports always use the full Result.
"""


def prepare_drawing(comparison):
    """Drawing data of a Comparison for every results view (runs on the worker thread)."""
    from .beam import is_beam, prepare_beam, single_view_comparison
    from .orbits import prepare_orbits
    from .photons import prepare_photons
    from .series import prepare_series

    beam = None
    photons = prepare_photons(comparison)
    if is_beam(comparison):
        beam = prepare_beam(comparison)
        comparison = single_view_comparison(comparison)
    return {"orbits": prepare_orbits(comparison), "series": prepare_series(comparison), "beam": beam,
            "photons": photons}
