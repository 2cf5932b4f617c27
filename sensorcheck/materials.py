"""Relative permittivity (and dielectric strength where known) of overlay and stack materials.

Each entry names where its numbers come from and the class of that source
(``handbook``, ``standard``, ``common practice``).  The nominal value is the one used
when a config names the material without an explicit ``epsilon_r``; the range is what
the source gives (permittivity of plastics and glasses depends on grade, frequency and
moisture, so a measured value of the actual part always wins: give ``epsilon_r`` in the
config).  Values are for roughly kHz to MHz, the band touch controllers work in.

Where a number comes from a touch-controller maker's design guide, the source class is
``common practice`` and the text says "vendor guidance (anonymous)".  Values written
"from memory" were not re-read in a source while this table was written.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Literal

MaterialSourceClass = Literal["handbook", "standard", "common practice"]
MaterialKind = Literal["overlay", "adhesive", "air", "mask"]

CRC = "CRC Handbook of Chemistry and Physics, section 'Permittivity (dielectric constant) of ...'"
VENDOR = "vendor guidance (anonymous), common practice"


@dataclass(frozen=True, slots=True)
class Material:
    """One material of the built-in table."""

    name: str
    epsilon_r: float  # nominal value used when the config gives none
    epsilon_r_range: tuple[float, float]  # the range the source gives
    source_class: MaterialSourceClass
    source: str  # the handbook / standard / practice the permittivity comes from
    breakdown_v_per_mm: float | None = None  # dielectric strength, where known
    breakdown_source: str | None = None
    kind: MaterialKind = "overlay"  # the overlay-layer kind this material usually is
    aliases: tuple[str, ...] = ()


_TABLE: tuple[Material, ...] = (
    Material(
        "air", 1.0006, (1.0005, 1.0006), "handbook",
        f"{CRC}: dry air at 1 atm, 20 degC, 1.00059 (from memory)",
        2000.0,
        "common practice design value (1.2-2.8 kV/mm in vendor guidance (anonymous); "
        "about 3 kV/mm uniform-field handbook value)",
        kind="air",
    ),
    Material(
        "soda-lime-glass", 7.0, (6.0, 8.0), "handbook",
        f"{CRC}: soda-lime glasses 6-8 (from memory); 7.6-8.0 in vendor guidance (anonymous)",
        7900.0, VENDOR,
        aliases=("glass", "soda-lime", "float-glass", "toughened-glass"),
    ),
    Material(
        "borosilicate-glass", 4.6, (4.0, 5.0), "handbook",
        f"{CRC}: borosilicate glasses about 4.6 at 1 MHz (from memory)",
        13000.0, VENDOR,
        aliases=("borosilicate",),
    ),
    Material(
        "glass-ceramic", 6.0, (6.0, 6.0), "common practice",
        VENDOR,
        13000.0, VENDOR,
    ),
    Material(
        "pmma", 2.8, (2.6, 3.6), "handbook",
        f"{CRC}: poly(methyl methacrylate) 2.6-3.6, falling with frequency (from memory); "
        "2.8 nominal is vendor guidance (anonymous), common practice",
        13000.0, VENDOR,
        aliases=("acrylic",),
    ),
    Material(
        "polycarbonate", 2.9, (2.9, 3.0), "handbook",
        f"{CRC}: polycarbonate 2.9-3.0 (from memory; the same in vendor guidance (anonymous))",
        16000.0, VENDOR,
        aliases=("pc",),
    ),
    Material(
        "abs", 2.9, (2.4, 4.1), "common practice",
        f"{VENDOR} (2.4-4.1); 3-D printed parts have voids and lower values (common practice)",
        16000.0, VENDOR,
    ),
    Material(
        "fr4", 4.5, (4.2, 4.8), "standard",
        "IPC-4101 specification sheets for epoxy-glass laminates: 4.2-4.8 at 1 MHz (from memory); "
        "nominal 4.5, the middle of that range",
        28000.0, VENDOR,
        aliases=("fr-4",),
    ),
    Material(
        "pet", 3.2, (3.0, 3.3), "handbook",
        f"{CRC}: poly(ethylene terephthalate) film about 3.2 at 1 kHz (from memory); "
        "3.2 in vendor guidance (anonymous)",
        280000.0, f"{VENDOR} (thin film)",
        aliases=("polyester", "pet-film"),
    ),
    Material(
        "polyimide", 3.4, (3.4, 3.5), "handbook",
        f"{CRC}: polyimide film 3.4-3.5 (from memory)",
        290000.0, f"{VENDOR} (thin film)",
        aliases=("polyimide-film", "pi"),
    ),
    Material(
        "dry-wood", 2.0, (1.2, 2.5), "common practice",
        VENDOR,
        3900.0, VENDOR,
        aliases=("wood",),
    ),
    Material(
        "gypsum-board", 3.0, (2.5, 6.0), "common practice",
        VENDOR,
        aliases=("plasterboard", "drywall"),
    ),
    Material(
        "acrylic-adhesive", 3.0, (2.5, 4.0), "common practice",
        "typical pressure-sensitive and optically clear acrylic adhesives 2.5-4 "
        "(common practice; high-permittivity grades of 4 and more exist)",
        kind="adhesive",
        aliases=("psa", "oca", "adhesive"),
    ),
    Material(
        "solder-mask", 3.5, (3.3, 4.0), "common practice",
        "typical liquid photoimageable solder masks 3.3-4.0 (common practice, from memory)",
        kind="mask",
        aliases=("soldermask", "mask"),
    ),
    Material(
        "water", 80.0, (78.0, 80.5), "handbook",
        f"{CRC}: water 80.1 at 20 degC, 78.4 at 25 degC (from memory)",
        aliases=(),
    ),
)

MATERIALS: Mapping[str, Material] = MappingProxyType({m.name: m for m in _TABLE})

#: the one FR-4 permittivity every default uses (the default stackup, the solver's fallback for a
#: dielectric without one, the rules' parameter): the table's nominal value and its source
FR4_EPSILON_R: float = MATERIALS["fr4"].epsilon_r


def _key(name: str) -> str:
    return name.strip().lower().replace("_", "-").replace(" ", "-")


_LOOKUP: Mapping[str, Material] = MappingProxyType(
    {**{a: m for m in _TABLE for a in m.aliases}, **{m.name: m for m in _TABLE}}
)


def lookup_material(name: str) -> Material | None:
    """The table entry for ``name`` (case, spaces and underscores ignored; aliases accepted)."""
    return _LOOKUP.get(_key(name))


def material_names() -> list[str]:
    """Every name the config accepts (names and aliases), sorted."""
    return sorted(_LOOKUP)
