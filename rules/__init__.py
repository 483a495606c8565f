"""The chemistry tables, installed as ``rank.rules`` and read by ``rank.tables``."""
