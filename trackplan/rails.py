"""Rail profile catalogue.

The catalogue is package data (``trackplan/data/rails.csv``): one row a
profile with area, mass per metre, vertical and lateral second moments of
area, height, foot and head width, the standard it comes from and whether the
row has been confirmed against that standard. Users add profiles of their own
from a TOML file (see :func:`load_user_profiles`).

Everything returned is SI (m, m**2, m**4, kg/m).

References
----------
EN 13674-1, Railway applications - Track - Rail - Part 1: Vignole railway rails
46 kg/m and above, Annex A (profile properties).
AREMA Manual for Railway Engineering, chapter 4 (Rail), rail section properties.
AS 1085.1 Railway track material - Steel rails.
"""

from __future__ import annotations

import csv
import difflib
import tomllib
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path

from trackplan import units
from trackplan.errors import InputError, excerpt

#: Density of rail steel used for the EN mass per metre [kg/m**3] (EN 13674-1).
DENSITY_EN_KG_M3 = 7850.0
#: Density implied by the AREMA weights (specific gravity 7.84) [kg/m**3].
DENSITY_AREMA_KG_M3 = 7840.0

_IN = 0.0254
_LB_PER_YD = 0.45359237 / 0.9144


@dataclass(frozen=True)
class RailProfile:
    """Section properties of one rail, SI.

    Attributes
    ----------
    name : str
        Profile designation (``60E1``, ``136RE``).
    area_m2 : float
        Cross-section area [m**2].
    mass_kg_per_m : float
        Mass per metre [kg/m].
    vertical_inertia_m4 : float
        Second moment of area for vertical bending (about the horizontal axis) [m**4].
    lateral_inertia_m4 : float
        Second moment of area for lateral bending (about the vertical axis) [m**4].
    height_m, foot_width_m, head_width_m : float
        Rail height, foot (base) width, head width [m].
    standard : str
        Standard the profile belongs to.
    confirmed : bool
        True when the row has been checked against the standard.
    source : str
        Where the values come from.
    """

    name: str
    area_m2: float
    mass_kg_per_m: float
    vertical_inertia_m4: float
    lateral_inertia_m4: float
    height_m: float
    foot_width_m: float
    head_width_m: float
    standard: str = ""
    confirmed: bool = False
    source: str = ""

    @property
    def is_north_american(self) -> bool:
        """True for AREMA profiles (which default to North American steel constants)."""
        return "AREMA" in self.standard

    def as_json(self) -> dict:
        """Catalogue row with units in the key names (docs/glossary.md)."""
        return {
            "name": self.name,
            "area_cm2": round(self.area_m2 * 1e4, 4),
            "mass_kg_per_m": round(self.mass_kg_per_m, 3),
            "vertical_inertia_cm4": round(self.vertical_inertia_m4 * 1e8, 2),
            "lateral_inertia_cm4": round(self.lateral_inertia_m4 * 1e8, 2),
            "height_mm": round(self.height_m * 1e3, 2),
            "foot_width_mm": round(self.foot_width_m * 1e3, 2),
            "head_width_mm": round(self.head_width_m * 1e3, 2),
            "standard": self.standard,
            "confirmed": self.confirmed,
            "source": self.source,
        }


def _row_to_profile(row: dict) -> RailProfile:
    system = row["unit_system"].strip()
    f = {k: float(row[k]) for k in ("area", "mass", "vertical_inertia", "lateral_inertia",
                                     "height", "foot_width", "head_width")}
    if system == "si":
        conv = dict(area=1e-4, mass=1.0, vertical_inertia=1e-8, lateral_inertia=1e-8,
                    height=1e-3, foot_width=1e-3, head_width=1e-3)
    elif system == "us":
        conv = dict(area=_IN**2, mass=_LB_PER_YD, vertical_inertia=_IN**4, lateral_inertia=_IN**4,
                    height=_IN, foot_width=_IN, head_width=_IN)
    else:  # pragma: no cover - catalogue file is ours and tested
        raise ValueError(f"rails.csv: unknown unit_system {system!r} for {row['name']}")
    return RailProfile(
        name=row["name"].strip(),
        area_m2=f["area"] * conv["area"],
        mass_kg_per_m=f["mass"] * conv["mass"],
        vertical_inertia_m4=f["vertical_inertia"] * conv["vertical_inertia"],
        lateral_inertia_m4=f["lateral_inertia"] * conv["lateral_inertia"],
        height_m=f["height"] * conv["height"],
        foot_width_m=f["foot_width"] * conv["foot_width"],
        head_width_m=f["head_width"] * conv["head_width"],
        standard=row["standard"].strip(),
        confirmed=row["confirmed"].strip().lower() == "yes",
        source=row["source"].strip(),
    )


@lru_cache(maxsize=1)
def catalogue() -> dict[str, RailProfile]:
    """The bundled catalogue, name -> :class:`RailProfile` (read once)."""
    text = resources.files("trackplan").joinpath("data/rails.csv").read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    return {p.name: p for p in (_row_to_profile(r) for r in csv.DictReader(lines))}


_USER_FIELDS = {
    "area": "area",
    "mass": "mass_per_length",
    "vertical_inertia": "second_moment",
    "lateral_inertia": "second_moment",
    "height": "length",
    "foot_width": "length",
    "head_width": "length",
}


def load_user_profiles(path: str | Path) -> dict[str, RailProfile]:
    """Read profiles of the user's own from a TOML file.

    Each table under ``[profiles]`` is one profile; every value carries its unit::

        [profiles.MY56]
        area = "71.6 cm**2"
        mass = "56.2 kg/m"
        vertical_inertia = "2321 cm**4"
        lateral_inertia = "421 cm**4"
        height = "158.75 mm"
        foot_width = "140 mm"
        head_width = "69.85 mm"
        source = "maker's drawing 1234"

    Raises
    ------
    InputError
        Unreadable file, missing field, value without a unit, wrong dimension.
    """
    from trackplan import safeio

    path = safeio.check_path(path, "profiles file")
    text = safeio.read_text(path, str(path))
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise InputError("not valid TOML for trackplan (values nested too deeply)", str(path)) from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML ({exc})", str(path)) from None
    tables = data.get("profiles")
    if not isinstance(tables, dict) or not tables:
        raise InputError("no [profiles.NAME] tables found", str(path))
    out = {}
    for name, table in tables.items():
        where = f"{path} [profiles.{name}]"
        if not isinstance(table, dict):
            raise InputError("expected a table of fields", where)
        unknown = set(table) - set(_USER_FIELDS) - {"source", "standard"}
        if unknown:
            raise InputError(
                f"unknown field(s) {sorted(unknown)}; accepted: {sorted(_USER_FIELDS) + ['source', 'standard']}",
                where,
            )
        vals = {}
        for field, kind in _USER_FIELDS.items():
            if field not in table:
                raise InputError(f"missing field '{field}' (e.g. {field} = \"{units._example(kind)}\")", where)
            v = units.parse(table[field], kind, f"{where} {field}")
            if v <= 0:
                raise InputError(f"{field} must be positive, got {table[field]!r}", where)
            vals[field] = v
        out[name] = RailProfile(
            name=name,
            area_m2=vals["area"],
            mass_kg_per_m=vals["mass"],
            vertical_inertia_m4=vals["vertical_inertia"],
            lateral_inertia_m4=vals["lateral_inertia"],
            height_m=vals["height"],
            foot_width_m=vals["foot_width"],
            head_width_m=vals["head_width"],
            standard=str(table.get("standard", "user")),
            confirmed=False,
            source=str(table.get("source", f"user file {path.name}")),
        )
    return out


def get_profile(
    name: str,
    extra: dict[str, RailProfile] | None = None,
    where: str | None = None,
) -> RailProfile:
    """Look a profile up by name (case-insensitive), in ``extra`` first.

    Raises
    ------
    InputError
        Unknown name; the message suggests the closest names and lists all.
    """
    pool = dict(catalogue())
    if extra:
        pool.update(extra)
    if name in pool:
        return pool[name]
    folded = {k.lower().replace(" ", ""): k for k in pool}
    key = name.lower().replace(" ", "")
    if key in folded:
        return pool[folded[key]]
    close = difflib.get_close_matches(name.upper(), list(pool), n=3, cutoff=0.5)
    hint = f" Did you mean {', '.join(close)}?" if close else ""
    raise InputError(
        f"unknown rail profile {excerpt(name)}.{hint} Known profiles: {', '.join(pool)} "
        "(add your own with a profiles TOML file)",
        where,
        field="rail",
    )


def profile_rows(extra: dict[str, RailProfile] | None = None) -> list[RailProfile]:
    """All profiles, catalogue first, then the user's."""
    rows = list(catalogue().values())
    if extra:
        rows += list(extra.values())
    return rows


__all__ = ["RailProfile", "catalogue", "get_profile", "load_user_profiles", "profile_rows"]
