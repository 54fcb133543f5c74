"""Traverse and turn schedule: passes in millimetres and machine steps (layer 2)."""
