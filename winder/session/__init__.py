"""Winding sessions: journal, resume, calibration, reports and history (layer 4)."""
