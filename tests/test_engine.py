"""Engine contract: one compiled kernel for every scenario, progress reporting (common practice, no source)."""

from pathlib import Path

import pytest

from tracker import load_scenario, track
from tracker.kernel import run_single

SCENARIOS = sorted((Path(__file__).resolve().parent.parent / "scenarios").glob("*.toml"))


def test_one_compiled_kernel_serves_every_field_model_pusher_and_damping():
    from tracker.pushers import PUSHERS
    from tracker.radiation.reaction import MODELS

    for path in SCENARIOS:
        s = load_scenario(path).with_run(duration=load_scenario(path).plan().dt * 20)
        for pusher in PUSHERS:
            for damping in MODELS:
                track(s.with_run(pusher=pusher, radiation_reaction=damping))
    assert len(run_single.signatures) == 1


def test_progress_reports_increasing_fractions_up_to_one(monkeypatch):
    import tracker.engine as engine

    monkeypatch.setattr(engine, "CHUNK_STEPS", 500)
    seen = []
    s = load_scenario(SCENARIOS[0])
    track(s.with_run(duration=s.plan().dt * 3000), progress=seen.append)
    assert seen == sorted(seen) and seen[-1] == pytest.approx(1.0) and len(seen) >= 6
