"""Winder link: protocol codec, serial transport, driver and simulated winder (layer 3)."""
