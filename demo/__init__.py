"""The demo's invented samples and peak files, installed as ``rank.demo_data`` and read by ``rank.demo``."""
