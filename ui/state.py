"""One session's lab state: the scenario under edit, its validation, the run and its results.

``LabState`` holds no widgets, so it is tested without a browser. Editors write raw
values into ``draft`` (numbers in SI or strings with units, exactly as a scenario
file holds them); after every change the draft is handed to ``Scenario.from_dict``,
which is the only judge of validity. Views watch the parameters.
"""

import copy
import functools

import param

import tracker
from tracker import Scenario, ScenarioError, plausibility
from tracker.engine import MODEL_ORDER
from tracker.fields import MODELS as FIELD_MODELS
from tracker.stops import StopReason

from . import schema
from .bundled import bundled_path
from .runner import RunController
from .views.runs import reference_run

#: run states shown by the page
STATUSES = ("idle", "queued", "running", "completed", "cancelled", "stopped", "failed")

#: largest scenario file the lab reads, bytes (the engine's own limit)
MAX_SCENARIO_BYTES = plausibility.MAX_SCENARIO_BYTES


def value_errors(draft):
    """Every input value that is wrong on its own, checked by its descriptor: {key path: message}.

    Cross-input rules (exactly one momentum key, dt_min <= dt_max, ...) are left to
    ``Scenario.from_dict``; this pass only makes sure that several bad boxes are all
    named at once, not just the first one the Scenario meets.
    """
    errors = {}

    def check(entry, raw, key):
        try:
            entry.parse(raw, key)
        except ScenarioError as exc:
            errors.setdefault(exc.key or key, _capped(str(exc)))
        except Exception as exc:  # a value no parser expected: still one message under its box
            errors.setdefault(key, f"{key}: cannot read {raw!r} ({type(exc).__name__}).")

    for table, entries in (("run", schema.RUN_ENTRIES), ("particle", schema.PARTICLE_ENTRIES),
                           ("beam", schema.BEAM_ENTRIES)):
        values = draft.get(table)
        if isinstance(values, dict):
            for name, raw in values.items():
                if name in entries:
                    check(entries[name], raw, f"{table}.{name}")
    fields = draft.get("field")
    for i, raw_field in enumerate(fields if isinstance(fields, list) else []):
        if not isinstance(raw_field, dict):
            continue
        model = field_model(raw_field.get("type"))
        if model is None:
            if "type" in raw_field:
                errors[f"field[{i}].type"] = (f"field[{i}].type: must be one of "
                                              f"{', '.join(map(repr, FIELD_MODELS))}, not {raw_field['type']!r}.")
            continue
        for p in model.params:
            if p.name in raw_field:
                check(p, raw_field[p.name], f"field[{i}].{p.name}")
    return errors


def _table_keys(mode, source="sampled"):
    """Keys the draft's particle table takes: [particle] keys for one particle; for a beam every
    [beam] key but those of the other source (a file beam has no centroid or spreads)."""
    from tracker.inputs import BEAM_SAMPLING_KEYS

    if mode == "particle":
        return set(schema.PARTICLE_ENTRIES)
    other = BEAM_SAMPLING_KEYS if source == "file" else schema.BEAM_FROM_FILE
    return {k for k in schema.BEAM_ENTRIES if k not in other}


def field_model(type_name):
    """The registered field model of a raw ``type`` value, or None (also for unhashable values)."""
    return FIELD_MODELS.get(type_name) if isinstance(type_name, str) else None


def default_models(draft):
    """The classic pair a scenario opens with: its own model (Landau-Lifshitz when it has none or
    an unknown one) and the run without reaction force, in ``MODEL_ORDER``."""
    run = draft.get("run") if isinstance(draft, dict) else None
    model = run.get("radiation_reaction") if isinstance(run, dict) else None
    if not isinstance(model, str) or model not in MODEL_ORDER or model == "none":
        model = "landau-lifshitz"
    return [m for m in MODEL_ORDER if m in (model, "none")]


def key_path(path):
    """Scenario key path of an input path: ('field', 0, 'B') -> 'field[0].B'."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += f".{part}" if out else part
    return out


def error_belongs_to(error_key, key):
    """True when an error reported for ``error_key`` concerns the input at ``key``."""
    if not error_key or not key:
        return False
    return error_key == key or error_key.startswith(key + "[") or error_key.startswith(key + ".")


class LabState(param.Parameterized):
    """Scenario draft, validated Scenario, run plan, run status and results of one session."""

    draft = param.Dict(default={}, doc="""
        The scenario under edit as raw values: numbers (SI) or strings with units,
        nested as in a scenario file ({'run': {...}, 'particle': {...}, 'field': [...]}).""")

    layout_version = param.Integer(default=0, doc="""
        Bumped when the set or order of inputs changes (a field added, removed or moved,
        species, momentum kind or step mode switched, a scenario loaded). Editors rebuild
        their forms then; plain value edits do not rebuild, so typing keeps its focus.""")

    scenario = param.Parameter(default=None, doc="""
        The Scenario validated from the draft, or None while the draft is invalid.""")

    plan = param.Parameter(default=None, doc="The RunPlan of ``scenario`` (dt, steps, memory).")

    error = param.String(default="", doc="The engine's message for an invalid draft ('' when valid).")

    error_key = param.String(default="", doc="Key path the engine named, e.g. 'field[0].B0'.")

    errors = param.Dict(default={}, doc="""
        Every known problem of the draft as {key path: message}: each value that is wrong
        on its own, plus the Scenario's message for a rule across inputs.""")

    source = param.String(default="", doc="Where the draft came from (file name or 'upload: name').")

    source_error = param.String(default="", doc="Why the last load failed ('' after a good load).")

    status = param.Selector(default="idle", objects=list(STATUSES), doc="State of the latest run.")

    progress = param.Number(default=0.0, bounds=(0.0, 1.0), doc="Fraction of the planned steps done.")

    status_text = param.String(default="", doc="One line about the latest run for people.")

    models = param.List(default=[], item_type=str, doc="""
        Radiation-reaction models the next run compares, in ``tracker.engine.MODEL_ORDER``
        (ticked in the Run card; a loaded scenario ticks its own model and 'none').""")

    comparison = param.Parameter(default=None, doc="tracker.Comparison of the latest run, one result per model.")

    prepared = param.Parameter(default=None, doc="Drawing data prepared on the worker from ``comparison``.")

    run_scenario = param.Parameter(default=None, doc="The Scenario the shown results came from.")

    loads = param.Integer(default=0, doc="Scenarios loaded in this session (bundled or uploaded).")

    run_count = param.Integer(default=0, doc="Runs finished in this session (completed, cancelled or failed).")

    base_dir = param.String(default=None, allow_None=True, doc="""
        Folder that relative file names in the draft (field maps) refer to: the folder of
        the scenario file loaded from disk; None for uploads (their maps are uploaded too).""")

    def __init__(self, prepare=None, **params):
        super().__init__(**params)
        self._prepare = prepare
        self._controller = None
        self._pending_kind = None       # momentum key chosen but not typed yet
        self._pending_step_mode = None  # step mode chosen but not typed yet
        self._pending_source = None     # how a beam's particles are made, chosen before its key is typed
        self._put_aside = {}            # {key: value} a switch took out of the draft; back on the way back

    # ------------------------------------------------------------------ loading
    def load_dict(self, data, source=""):
        """Take a raw scenario dict (as read from TOML) as the new draft."""
        if not isinstance(data, dict):
            self.source_error = f"a scenario is a table of keys, not {type(data).__name__}."
            return False
        if plausibility.nesting_depth(data) > plausibility.MAX_NESTING:
            self.source_error = (f"{source or 'the file'}: not a scenario: arrays or tables nested more than "
                                 f"{plausibility.MAX_NESTING} deep; nothing was loaded.")
            return False
        draft = copy.deepcopy(data)
        fields = draft.get("field", [])
        if isinstance(fields, dict):
            draft["field"] = [fields]
        self.source_error = ""
        self.source = source
        self._pending_kind = self._pending_step_mode = self._pending_source = None
        self._put_aside = {}
        self._forget_results()
        self.models = default_models(draft)
        self._set_draft(draft, relayout=True)
        self.loads += 1
        return True

    def _forget_results(self):
        """Drop the run and results of the previous scenario (a running one is cancelled)."""
        if self._controller is not None:
            self._controller.cancel()
            self._controller = None
        self.param.update(status="idle", progress=0.0, status_text="", comparison=None, prepared=None,
                          run_scenario=None)

    def store_upload(self, name, content):
        """Keep an uploaded file (bytes) for this session; returns its absolute path (str).

        Field-map uploads land in one temporary folder per session; the draft then names
        the file by that absolute path, so it resolves whatever ``base_dir`` is.
        """
        import tempfile
        from pathlib import Path

        if getattr(self, "_upload_dir", None) is None:
            self._upload_dir = tempfile.mkdtemp(prefix="radorbit-lab-")
        path = Path(self._upload_dir) / Path(name).name
        path.write_bytes(content)
        return str(path)

    def load_toml(self, text, source="", base_dir=None):
        """Load TOML text as the draft; on a syntax error keep the current draft.

        Returns
        -------
        bool
            True when loaded (the draft may still be invalid: see ``error``).
        """
        try:
            data = plausibility.toml_table(text)   # syntax errors, absurd nesting and size: one line each
        except ScenarioError as exc:
            self.source_error = f"{source or 'the file'}: {_capped(str(exc))}; nothing was loaded."
            return False
        self.base_dir = None if base_dir is None else str(base_dir)
        return self.load_dict(data, source)

    def load_bundled(self, name):
        """Load one of the bundled scenario files by its file name."""
        path = bundled_path(name)
        return self.load_toml(path.read_text(encoding="utf-8"), name, base_dir=path.resolve().parent)

    # ------------------------------------------------------------------ editing
    def value(self, path):
        """Raw draft value at an input path (None when absent)."""
        node = self.draft
        for part in path:
            try:
                node = node[part]
            except (KeyError, IndexError, TypeError):
                return None
        return node

    def table(self, name):
        """A top-level table of the draft as a dict ({} when absent or malformed)."""
        value = self.draft.get(name)
        return value if isinstance(value, dict) else {}

    def fields(self):
        """The draft's field list ([] when absent or malformed)."""
        value = self.draft.get("field")
        return value if isinstance(value, list) else []

    def set_value(self, path, raw, relayout=False):
        """Set (or, for ``raw=None``, remove) one raw value and re-validate.

        Parameters
        ----------
        path : tuple
            ``('title',)``, ``('run', 'duration')``, ``('particle', 'position')`` or
            ``('field', i, 'B0')``.
        raw : number, str, list or None
        relayout : bool
            True when the value changes which inputs are shown (forms rebuild).
        """
        draft = copy.deepcopy(self.draft)
        node = draft
        for part in path[:-1]:
            if isinstance(part, int):
                node = node[part]
            else:
                if not isinstance(node.get(part), (dict, list)):
                    node[part] = {}  # a malformed table from a file is replaced by the edit
                node = node[part]
        last = path[-1]
        if raw is None:
            node.pop(last, None)
        else:
            node[last] = raw
        if tuple(path) == ("run", "radiation_reaction"):
            self._follow_model_choice(raw)
        self._set_draft(draft, relayout=relayout)

    def set_models(self, models):
        """Tick these radiation-reaction models for the next run (kept in ``MODEL_ORDER``).

        Raises
        ------
        ScenarioError
            For a name that is not a model (named in the message).
        """
        unknown = [m for m in models if m not in MODEL_ORDER]
        if unknown:
            raise ScenarioError("models", f"must name models from {', '.join(MODEL_ORDER)}, not {unknown[0]!r}.")
        self.models = [m for m in MODEL_ORDER if m in models]

    def _follow_model_choice(self, model):
        """The scenario's model was changed in the run form: the run compares the new one instead."""
        old = self.table("run").get("radiation_reaction", "landau-lifshitz")
        if not isinstance(model, str) or model not in MODEL_ORDER or model == old:
            return
        ticked = [m for m in self.models if m != old or m == "none"]
        self.set_models([*ticked, model])

    def particle_section(self):
        """'beam' when the draft describes a beam ([beam] table), else 'particle'."""
        return "beam" if "beam" in self.draft and "particle" not in self.draft else "particle"

    def set_particle_mode(self, mode):
        """Turn the draft's [particle] table into a [beam] table ('beam') or back ('particle').

        The keys both tables share (species and its extras, position, momentum, direction) are
        kept as typed. Keys the new table does not take (the beam's own on the way to one
        particle) are put aside and come back on the way back, so switching loses nothing.
        Nothing is invented: a new beam's count stays empty until typed (the Scenario says it
        is required).
        """
        if mode not in schema.PARTICLE_MODES:
            raise ScenarioError("particle", f"the mode must be one of {', '.join(schema.PARTICLE_MODES)}, "
                                            f"not {mode!r}.")
        current = self.particle_section()
        if mode == current:
            return
        if current == "beam":
            self._pending_source = self.beam_source()   # a beam comes back the way it was made
        self._reshape(mode, self._pending_source or "sampled")

    def beam_source(self):
        """'file' when the draft's beam is read from a particle file, else 'sampled'."""
        beam = self.table("beam")
        if "file" in beam:
            return "file"
        if any(k in beam for k in schema.BEAM_SAMPLED):
            return "sampled"
        return self._pending_source or "sampled"

    def set_beam_source(self, source):
        """Make the beam's particles by sampling about a centroid ('sampled') or read them from a
        particle file ('file'). Keys the other way needs are put aside and come back on the way back."""
        if source not in schema.BEAM_SOURCES:
            raise ScenarioError("beam", f"the source must be one of {', '.join(schema.BEAM_SOURCES)}, "
                                        f"not {source!r}.")
        if self.particle_section() == "beam" and source != self.beam_source():
            self._reshape("beam", source)
        self._pending_source = source

    def _reshape(self, mode, source):
        """Rebuild the particle or beam table for ``mode`` and a beam's ``source``: keys it does not
        take go aside, keys put aside earlier that it takes come back (the draft's own values win)."""
        allowed = _table_keys(mode, source)
        current = self.particle_section()
        old = dict(self.table(current))
        new = {k: v for k, v in old.items() if k in allowed}
        # a second table from a file (the Scenario refuses both) joins what was put aside
        stray = {k: v for k, v in self.table(mode).items() if mode != current}
        aside = {k: v for k, v in {**self._put_aside, **stray}.items() if k not in old}
        for key in [k for k in aside if k in allowed and k not in new]:
            new[key] = aside.pop(key)
        aside.update({k: v for k, v in old.items() if k not in allowed})
        self._put_aside = aside
        if mode == "beam":
            self._pending_source = source
        # the new table takes the old one's place, so a downloaded file keeps its order
        draft = {(mode if key == current else key): (new if key == current else copy.deepcopy(value))
                 for key, value in self.draft.items() if key != mode}
        draft.setdefault(mode, new)
        self._set_draft(copy.deepcopy(draft), relayout=True)

    def set_species(self, name):
        """Switch the species; inputs that only belong to another species are dropped."""
        section = self.particle_section()
        draft = copy.deepcopy(self.draft)
        particle = draft[section] = dict(self.table(section))
        particle["species"] = name
        for other, keys in schema.SPECIES_EXTRAS.items():
            if other != name:
                for key in keys:
                    particle.pop(key, None)
        self._set_draft(draft, relayout=True)

    def momentum_kind(self):
        """Which momentum key the draft uses (the first given, or the engine's first)."""
        particle = self.table(self.particle_section())
        for key in schema.momentum_keys():
            if key in particle:
                return key
        return self._pending_kind or schema.momentum_keys()[0]

    def set_momentum_kind(self, kind):
        """Give the momentum another way; the old value is dropped (no conversion in the UI)."""
        section = self.particle_section()
        if kind == self.momentum_kind() and kind in self.table(section):
            return
        draft = copy.deepcopy(self.draft)
        particle = draft[section] = dict(self.table(section))
        for key in schema.momentum_keys():
            particle.pop(key, None)
        if kind not in schema.scalar_momentum_keys():
            particle.pop("direction", None)
        # the new key stays absent (its box empty) until the user types a value
        self._pending_kind = kind
        self._set_draft(draft, relayout=True)

    def step_mode(self):
        """'dt' when the draft gives a fixed step, else 'steps_per_period'."""
        run = self.table("run")
        if "dt" in run:
            return "dt"
        if "steps_per_period" in run:
            return "steps_per_period"
        return self._pending_step_mode or "steps_per_period"

    def set_step_mode(self, mode):
        """Switch between a fixed dt and steps per period; the other key is dropped."""
        if mode == self.step_mode():
            return
        draft = copy.deepcopy(self.draft)
        run = draft["run"] = dict(self.table("run"))
        run.pop("dt" if mode == "steps_per_period" else "steps_per_period", None)
        self._pending_step_mode = mode
        self._set_draft(draft, relayout=True)

    def add_field(self, type_name):
        """Append a field component of a registered type with no values yet."""
        if type_name not in FIELD_MODELS:
            raise KeyError(type_name)
        draft = copy.deepcopy(self.draft)
        draft["field"] = [*self.fields(), {"type": type_name}]
        self._set_draft(draft, relayout=True)

    def remove_field(self, index):
        """Remove field component ``index``."""
        draft = copy.deepcopy(self.draft)
        del draft["field"][index]
        self._set_draft(draft, relayout=True)

    def move_field(self, index, offset):
        """Move field component ``index`` by ``offset`` places (clamped to the list)."""
        draft = copy.deepcopy(self.draft)
        fields = draft["field"] = list(self.fields())
        target = max(0, min(len(fields) - 1, index + offset))
        if target == index:
            return
        fields.insert(target, fields.pop(index))
        self._set_draft(draft, relayout=True)

    # ------------------------------------------------------------------ validation
    def _set_draft(self, draft, relayout=False):
        # remember the chosen momentum key and step mode while their box is empty
        particle, run = draft.get("particle", draft.get("beam", {})), draft.get("run", {})
        if isinstance(particle, dict):
            given = [key for key in schema.momentum_keys() if key in particle]
            if given:
                self._pending_kind = given[0]
        if isinstance(run, dict):
            for mode in ("dt", "steps_per_period"):
                if mode in run:
                    self._pending_step_mode = mode
        self.draft = draft
        self.validate()
        if relayout:
            self.layout_version += 1

    def validate(self):
        """Hand the draft to ``Scenario.from_dict``; keep the Scenario or every message found."""
        errors = value_errors(self.draft)
        try:
            scenario = Scenario.from_dict(self.draft, base_dir=self.base_dir)
            plan = scenario.plan()
        except ScenarioError as exc:
            message, key = _capped(str(exc)), exc.key
        except Exception as exc:  # an engine bug must not take the page down
            message, key = _capped(f"the engine could not read this scenario ({type(exc).__name__}: {exc})"), ""
        else:
            self.param.update(scenario=scenario, plan=plan, error="", error_key="", errors={})
            return True
        if not any(error_belongs_to(k, key) or error_belongs_to(key, k) for k in errors):
            errors = {key: message, **errors}
        first_key = next(iter(errors)) if key in errors else key
        self.param.update(scenario=None, plan=None, error=errors.get(first_key, message), error_key=first_key,
                          errors=errors)
        return False

    def toml_text(self):
        """The validated scenario as TOML, values as entered ("120 fs"); None while the draft is invalid."""
        return None if self.scenario is None else self.scenario.to_toml()

    @property
    def results_stale(self):
        """True when the shown results came from another version of the scenario."""
        if self.run_scenario is None:
            return False
        return self.scenario is None or self.scenario.to_dict() != self.run_scenario.to_dict()

    def memory_problem(self):
        """The engine's refusal of the ticked models run side by side (``tracker.plan``:
        every model's result is kept) as one line; '' when they fit or there is no plan."""
        if self.scenario is None or self.plan is None or len(self.models) < 2:
            return ""
        from tracker.plan import refuse_if_comparison_too_large

        try:
            refuse_if_comparison_too_large(self.scenario, len(self.models), self.plan, models=self.models)
        except ScenarioError as exc:
            return _capped(str(exc))
        return ""

    # ------------------------------------------------------------------ running
    @property
    def running(self):
        return self._controller is not None and not self._controller.done

    @property
    def controller(self):
        return self._controller

    def start_run(self, job=None):
        """Start the current scenario with every ticked model (``models``) on a worker thread.

        Parameters
        ----------
        job : callable(scenario, progress=, cancel=), optional
            Replaces ``tracker.compare(scenario, models=self.models)`` (tests, scripts).

        Returns
        -------
        bool
            False when the draft is invalid, no model is ticked, the ticked models do not fit in
            memory together (``memory_problem``) or a run is already going.
        """
        if self.scenario is None or self.running or (job is None and (not self.models or self.memory_problem())):
            return False
        if job is None:
            job = functools.partial(tracker.compare, models=list(self.models))
        self._controller = RunController(self.scenario, job=job, prepare=self._prepare).start()
        self.param.update(status="queued", progress=0.0, status_text="")
        self.poll()
        return True

    def cancel_run(self):
        """Ask the running engine to stop; it keeps and marks what it computed."""
        if self.running:
            self._controller.cancel()
            if self._controller.started:
                self.status_text = "cancelling at the next chunk of steps…"

    def poll(self):
        """Copy progress, and the outcome once done, from the worker into the state.

        Call from the page's event loop (a periodic callback). Returns True when the
        run is over (or there is none).
        """
        ctl = self._controller
        if ctl is None:
            return True
        if not ctl.done:
            position = ctl.position
            if position:
                text = (f"queued: position {position} in line; runs start as earlier ones finish "
                        "(one per CPU core at a time)")
                if self.status != "queued" or self.status_text != text:
                    self.param.update(status="queued", status_text=text)
            elif ctl.reported:
                updates = {"status": "running", "progress": min(1.0, ctl.fraction)}
                if not ctl.cancel_requested:
                    updates["status_text"] = (f"running: {100 * ctl.fraction:.0f} % of the planned steps, "
                                              f"{ctl.elapsed:.1f} s")
                self.param.update(**updates)
            elif self.status != "running":
                self.param.update(status="running", status_text="starting: loading compiled kernels…")
            return False
        self._finish(ctl)
        return True

    def _finish(self, ctl):
        self._controller = None
        if ctl.error:
            self.param.update(status="failed", status_text=_capped(ctl.error), run_count=self.run_count + 1)
            return
        comparison = ctl.outcome
        if comparison is None:  # cancelled while it waited in line
            self.param.update(status="cancelled", progress=0.0, status_text="cancelled before it started",
                              run_count=self.run_count + 1)
            return
        # a job may hand back one Result instead of a Comparison (``job=tracker.track``)
        first = reference_run(comparison) if hasattr(comparison, "results") else comparison
        meta = first.meta
        reason = StopReason.of(meta.get("stop_reason"))
        steps, planned = meta.get("steps", 0), meta.get("planned_steps", 0)
        if meta.get("complete", False):
            status = "completed"
            text = f"completed: {steps:,} steps per run in {ctl.elapsed:.2f} s"
        elif reason is StopReason.CANCELLED:
            status = "cancelled"
            share = 100.0 * steps / planned if planned else 0.0
            text = (f"cancelled after {steps:,} of {planned:,} steps ({share:.0f} %): "
                    "the partial results below are marked as such")
        else:
            status = "stopped"
            why = reason.description if reason is not None else str(meta.get("stop_reason", "unknown reason"))
            if meta.get("stop_detail"):
                why += f" ({meta['stop_detail']})"
            text = f"stopped early after {steps:,} of {planned:,} steps: {why}"
        self.param.update(
            run_scenario=ctl.scenario,
            comparison=comparison,
            prepared=ctl.prepared,
            progress=min(1.0, ctl.fraction) if status != "completed" else 1.0,
            status=status,
            status_text=text,
            run_count=self.run_count + 1,
        )

    def wait_run(self, timeout=None):
        """Block until the current run is over, then poll (for scripts and tests)."""
        ctl = self._controller
        if ctl is not None:
            ctl.wait(timeout)
        return self.poll()


#: longest message shown for one problem (a pasted megabyte must not become a megabyte of page)
MAX_MESSAGE = 400


def _capped(text):
    return text if len(text) <= MAX_MESSAGE else text[:MAX_MESSAGE - 1] + "…"
