"""The board model: what the fabrication files say, in mm, with no sensor knowledge."""

from sensorcheck.board.model import (
    Board,
    Component,
    Feature,
    FileInfo,
    Hole,
    Layer,
    NetPoint,
    Stackup,
    StackupLayer,
)

__all__ = ["Board", "Component", "Feature", "FileInfo", "Hole", "Layer", "NetPoint", "Stackup", "StackupLayer"]
