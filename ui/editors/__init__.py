"""Editors: scenario source, field composer, particle and run forms (all write to LabState)."""
