"""Rail catalogue against published values and self-consistency."""

from __future__ import annotations

import pytest

from trackplan import rails
from trackplan.errors import InputError

# Values quoted from the profile standards (EN 13674-1 Annex A; AREMA MRE ch. 4; AS 1085.1)
# as published in catalogues and open data files (docs/sources.md, rail profiles). Key: name -> (area cm2, mass kg/m, I vertical cm4, I lateral cm4,
# height, foot, head mm).
PUBLISHED_SI = {
    "60E1": (76.70, 60.21, 3038.3, 512.3, 172, 150, 72),
    "54E1": (69.77, 54.77, 2337.9, 419.2, 159, 140, 70),
    "60E2": (76.48, 60.03, 3022, 510.5, 172, 150, 72),
    "UIC60": (76.86, 60.34, 3055, 512.9, 172, 150, 72),
    "AS60": (77.25, 60.6, 2930, 490, 170, 146, 70),
}
# AREMA profiles in US units: (area in2, lb/yd, I vertical in4, I lateral in4, height, foot, head in)
PUBLISHED_US = {
    "115RE": (11.22, 114.4, 65.5, 10.7, 6.625, 5.5, 2.71875),
    "132RE": (12.91, 131.7, 87.9, 14.4, None, None, None),
    "136RE": (13.35, 136.2, 94.9, None, 7.3125, 6.0, 2.9375),
}


@pytest.mark.parametrize("name", PUBLISHED_SI)
def test_en_profiles_against_published(name):
    p = rails.get_profile(name)
    a, m, iv, il, h, f, hd = PUBLISHED_SI[name]
    assert p.area_m2 * 1e4 == pytest.approx(a, rel=1e-4)
    assert p.mass_kg_per_m == pytest.approx(m, rel=1e-4)
    assert p.vertical_inertia_m4 * 1e8 == pytest.approx(iv, rel=1e-4)
    assert p.lateral_inertia_m4 * 1e8 == pytest.approx(il, rel=1e-4)
    assert (p.height_m * 1e3, p.foot_width_m * 1e3, p.head_width_m * 1e3) == pytest.approx((h, f, hd))


@pytest.mark.parametrize("name", PUBLISHED_US)
def test_arema_profiles_against_published(name):
    p = rails.get_profile(name)
    vals = PUBLISHED_US[name]
    got = (
        p.area_m2 / 0.0254**2,
        p.mass_kg_per_m / (0.45359237 / 0.9144),
        p.vertical_inertia_m4 / 0.0254**4,
        p.lateral_inertia_m4 / 0.0254**4,
        p.height_m / 0.0254,
        p.foot_width_m / 0.0254,
        p.head_width_m / 0.0254,
    )
    for want, have in zip(vals, got):
        if want is not None:
            assert have == pytest.approx(want, rel=1e-4)


@pytest.mark.parametrize("p", list(rails.catalogue().values()), ids=lambda p: p.name)
def test_area_times_density_gives_mass(p):
    # Consistency needing no source: A * rho = mass per metre. EN masses use 7850 kg/m3,
    # AREMA weights specific gravity 7.84. Tolerance 1 % (catalogue rounding, GB/JIS densities).
    rho = rails.DENSITY_AREMA_KG_M3 if p.is_north_american else rails.DENSITY_EN_KG_M3
    assert p.area_m2 * rho == pytest.approx(p.mass_kg_per_m, rel=0.01)


def test_catalogue_has_required_profiles():
    need = {"49E1", "54E1", "60E1", "60E2", "UIC60", "115RE", "132RE", "136RE", "141RE"}
    assert need <= set(rails.catalogue())
    assert len(rails.catalogue()) >= len(need) + 3
    for p in rails.catalogue().values():
        assert p.source and p.standard
        assert p.vertical_inertia_m4 > p.lateral_inertia_m4 > 0


def test_unknown_profile_suggests_close_names():
    with pytest.raises(InputError, match="Did you mean .*60E1"):
        rails.get_profile("60E3")
    assert rails.get_profile("60e1").name == "60E1"


def test_user_profiles(tmp_path):
    f = tmp_path / "mine.toml"
    f.write_text(
        '[profiles.X56]\narea = "71.6 cm**2"\nmass = "56.2 kg/m"\nvertical_inertia = "2321 cm**4"\n'
        'lateral_inertia = "421 cm**4"\nheight = "158 mm"\nfoot_width = "140 mm"\nhead_width = "70 mm"\n'
    )
    extra = rails.load_user_profiles(f)
    p = rails.get_profile("X56", extra)
    assert p.area_m2 == pytest.approx(71.6e-4)
    assert not p.confirmed
    f.write_text('[profiles.X56]\narea = "71.6"\n')
    with pytest.raises(InputError, match="no unit"):
        rails.load_user_profiles(f)
