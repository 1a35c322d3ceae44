"""Fuzz tests (hypothesis): whatever a person types or a file holds, trackplan answers with a value
inside the plausible range or an InputError, never another exception. Sized to run in a few
seconds; ``bench/bench_fuzz.py`` runs the same properties far longer.
"""

from __future__ import annotations

import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trackplan import ranges, units, weather
from trackplan.errors import InputError

FAST = settings(max_examples=150, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])

_UNITS = sorted({u for t in units._UNITS.values() for u in t} | {"kN/mm", "furlong", "rad", "degree_Celsius",
                                                                  "delta_degF", "lbf/in", "", "%", "m/s/s"})
_FIELDS = sorted(ranges.RANGES) + sorted(ranges.ALIASES) + ["unknown_field"]
_NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 5e-324, 1e-320, 1e-9, 1e308, -1e308, 1.0, 8.0, 95.0]),
    st.integers(-10**6, 10**6).map(float),
)


def quantity_text():
    return st.one_of(
        st.builds(lambda n, u: f"{n!r} {u}", _NUMBERS, st.sampled_from(_UNITS)),
        st.builds(lambda n, u: f"{n:g}{u}", _NUMBERS, st.sampled_from(_UNITS)),
        st.text(max_size=40),
    )


def _check_parse(text, kind, field):
    try:
        v = units.parse(text, kind, f"--{field.replace('_', '-')}", default_unit=units.SI_UNIT[kind])
    except InputError:
        return
    assert math.isfinite(v)
    row = ranges.lookup(field)
    lo, hi = (row.lo, row.hi) if row is not None and row.kind == kind else ranges.KIND_RANGES[kind]
    assert lo <= v <= hi
    assert v == 0.0 or abs(v) >= ranges.TINY


@FAST
@given(text=quantity_text(), kind=st.sampled_from(sorted(units.SI_UNIT)), field=st.sampled_from(_FIELDS))
def test_parsed_quantities_are_in_range_or_refused(text, kind, field):
    _check_parse(text, kind, field)


_CSV_CELLS = st.one_of(st.sampled_from(["", "5", "-3.5", "nan", "1e400", '"', "2999-01-01T00:00", "abc", "99.9",
                                        "2001-01-01", "\x00", "\r"]),
                       st.text(max_size=12))


def csv_text():
    header = st.sampled_from(["time,air_temperature [degC]", "date,tmax [degC],tmin [degC]",
                              "time,air_temperature [degF],ghi [W/m**2]", "date,tmax,tmin", "x,y", ""])
    rows = st.lists(st.lists(_CSV_CELLS, min_size=1, max_size=4).map(",".join), max_size=8)
    good = st.integers(0, 60).map(lambda n: "\n".join(f"2001-01-{1 + i % 28:02d}T{i % 24:02d}:00,{i % 30}"
                                                       for i in range(n)))
    return st.builds(lambda h, g, r: "\n".join([h, g, *r]) + "\n", header, good, rows)


@FAST
@given(text=csv_text())
def test_any_record_text_reads_or_is_refused(tmp_path_factory, text):
    p = tmp_path_factory.mktemp("fz") / "r.csv"
    p.write_text(text, encoding="utf-8", errors="surrogatepass")
    try:
        df, meta = weather.read_record(p)
    except InputError as exc:
        assert len(str(exc)) < 1200
        return
    assert len(df) >= 1


_TOML_VALUES = st.one_of(quantity_text().map(lambda t: '"' + t.replace("\\", "").replace('"', "") + '"'),
                         _NUMBERS.filter(math.isfinite).map(repr), st.sampled_from(["true", "[]", "{}", '""']))
_SECTION_FIELDS = ["rail", "radius", "length", "track_azimuth", "misalignment", "shade", "latitude",
                   "neutral_temperature", "drift_allowance", "gap_limit", "sleeper", "rail_temperature_method",
                   "climate_units_confirmed", "return_period", "nonsense"]


@FAST
@given(fields=st.dictionaries(st.sampled_from(_SECTION_FIELDS), _TOML_VALUES, max_size=5))
def test_any_section_reads_or_is_reported(tmp_path_factory, fields):
    from trackplan.sections import load_sections

    d = tmp_path_factory.mktemp("fs")
    (d / "r.csv").write_text("date,tmax [degC],tmin [degC]\n2001-01-01,20,10\n")
    body = '[sections.A]\nrail = "60E1"\nclimate = "r.csv"\nneutral_temperature = "30 degC"\n[sections.B]\n'
    body += "".join(f"{k} = {v}\n" for k, v in fields.items())
    (d / "n.toml").write_text(body)
    try:
        sf = load_sections(d / "n.toml")
    except InputError:
        return
    assert [s.id for s in sf.sections][:1] == ["A"]  # the good section survives any neighbour
    for p in sf.problems:
        assert isinstance(p, InputError) and "[sections.B]" in str(p)
