"""Readers of fabrication files. A reader knows nothing of sensors or rules."""
