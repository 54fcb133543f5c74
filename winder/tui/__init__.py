"""Terminal UI: plan view and live winding monitor (layer 5)."""
