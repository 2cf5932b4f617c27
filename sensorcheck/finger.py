"""The finger as a config gives it: the plain record, its defaults with their sources, a sanity check.

Ground floor: ``design/config.py`` fills and validates it, ``physics/`` models it (the circuit
around the finger is in :mod:`sensorcheck.physics.finger`), reports print it.

Defaults and their sources (used when the config gives no ``[finger]``, or leaves a value out):

* contact diameter 8 mm: common practice (the usual design finger in touch-sensor guidance;
  a fingertip is a disc of about 5-10 mm);
* length 20 mm: our stated model choice (the distal part of a finger; the rest of the body is
  represented by the body capacitance, not by geometry);
* body capacitance to earth 150 pF: measured values are about 100-200 pF; IEC 61000-4-2 uses
  150 pF for its human-body model (standard);
* device ground coupling: None (earthed), unless the config says the product is battery powered.

A body capacitance of 0 pF models a floating object (a coin, a water film): a conductor with no
path to earth beyond its own capacitance, which the field solver takes from its geometry.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class Finger:
    """The finger model's inputs; defaults and their sources are :data:`FINGER_DEFAULTS` below."""

    contact_diameter_mm: float
    length_mm: float
    body_capacitance_pf: float
    device_ground_coupling_pf: float | None  # None: the device is earthed


FINGER_DEFAULTS = Finger(
    contact_diameter_mm=8.0,  # common practice
    length_mm=20.0,  # stated model choice
    body_capacitance_pf=150.0,  # standard: IEC 61000-4-2 human-body model (measured 100-200 pF)
    device_ground_coupling_pf=None,  # earthed unless the config says otherwise
)

#: the lowest height of the approach curve above the overlay surface before the touch (mm): the
#: curve is solved from ``[estimate] max_height_mm`` down to here (physics.model.approach_heights),
#: so a top height must lie above it
LOWEST_APPROACH_MM = 0.25

FINGER_SOURCES: dict[str, str] = {
    "contact_diameter_mm": "common practice (design finger of touch-sensor guidance)",
    "length_mm": "stated model choice (distal finger; the body enters as body_capacitance_pf)",
    "body_capacitance_pf": "standard: IEC 61000-4-2 human-body model 150 pF (measured 100-200 pF)",
    "device_ground_coupling_pf": "config: None means the product's ground is earthed",
}


def validate_finger(finger: Finger) -> None:
    """Raise ValueError for a finger that cannot be modelled."""
    if not finger.contact_diameter_mm > 0:
        raise ValueError("finger contact diameter must be positive")
    if not finger.length_mm > 0:
        raise ValueError("finger length must be positive")
    if not finger.body_capacitance_pf >= 0:
        raise ValueError("body capacitance must not be negative")
    if finger.device_ground_coupling_pf is not None and not finger.device_ground_coupling_pf >= 0:
        raise ValueError("device ground coupling must not be negative")
