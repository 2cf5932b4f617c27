"""Kept for older imports: the material table lives in :mod:`sensorcheck.materials`.

The config validates against it and physics reads it, so it sits on the ground floor.
"""

from sensorcheck.materials import MATERIALS, Material, MaterialKind, MaterialSourceClass, lookup_material, material_names

__all__ = ["MATERIALS", "Material", "MaterialKind", "MaterialSourceClass", "lookup_material", "material_names"]
