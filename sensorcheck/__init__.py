"""sensorcheck: capacitive touch sensor layout checks on PCB fabrication outputs.

Data flows one way: files -> board -> design (board + config) -> findings and
estimates -> reports. See DEVELOPERS.md for the package map.
"""

__version__ = "0.1.0"

#: the board config's file name (found beside the fabrication files; never read as one of them)
CONFIG_NAME = "sensorcheck.toml"
