"""The browser lab: edit a Scenario, run it off the UI thread, draw its Results.

The lab is a view on the engine (``tracker``). It builds Scenarios from what the
user types (numbers in SI or strings with units, exactly as a scenario file would
hold them), lets the Scenario validate them, asks ``tracker.compare`` to run, and
draws the Results. It computes no physics.

Layout of the package
---------------------
``state.py``       ``LabState``: one session's scenario draft, validation, plan, run and results
``runner.py``      ``RunController``: one engine run on a worker thread with progress and cancel
``entries.py``     text typed in an input <-> the raw value a scenario file holds
``format.py``      numbers and units for display (energies in eV multiples, axis units)
``bundled.py``     the scenario files shipped in ``scenarios/``
``editors/``       scenario source, field composer (forms from the field registry), particle, run
``views/``         field preview, orbit projections, time series, summary, export
``controls.py``    run / cancel buttons, progress bar, status line
``app.py``         ``create_app`` (one session) and ``serve`` (the ``radorbit lab`` command)
"""
