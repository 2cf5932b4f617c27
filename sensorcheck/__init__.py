"""sensorcheck: capacitive touch sensor layout checks on PCB fabrication outputs.

Data flows one way: files -> board -> design (board + config) -> findings and
estimates -> reports. See DEVELOPERS.md for the package map.
"""

__version__ = "0.1.0"
