"""Shared fixtures: scenario builders used across the physics tests."""

import os

os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")
