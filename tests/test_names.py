"""The light name lists of the command line equal the registries they stand for."""

from trackplan import extremes, loading, names, railtemp, sections, stability, target


def test_name_lists_equal_their_registries():
    assert names.RAIL_TEMPERATURE_METHODS == tuple(railtemp.METHODS)
    assert names.method_choices() == tuple(railtemp.method_names()) == sections.RAIL_TEMPERATURE_METHODS
    assert names.DISTRIBUTIONS == tuple(extremes.DISTRIBUTIONS)
    assert names.CRITERIA == tuple(stability.CRITERIA)
    assert names.DEFAULT_CRITERION == stability.DEFAULT_CRITERION
    assert names.PRIORITIES == target.PRIORITIES
    assert names.loading_names() == (*loading.train_presets(), loading.NO_LOADING)
    assert names.DEFAULT_LOADING in loading.train_presets()


def test_help_lists_come_from_the_registries(run_cli):
    out = run_cli("stability", "--help").output
    for name in (*names.CRITERIA, *names.loading_names()):
        assert name in out
    out = run_cli("railtemp", "--help").output
    for name in names.method_choices():
        assert name in out


def test_limits_come_from_the_one_range_table():
    from trackplan import destressing, ranges, register, screening, track, weather

    assert destressing.TARGET_RANGE_C == ranges.bounds("target") == screening.NEUTRAL_RANGE_C
    assert destressing.CURRENT_NEUTRAL_RANGE_C == register.MEASURED_RANGE_C == ranges.bounds("current_neutral")
    assert register.SET_RANGE_C == ranges.bounds("neutral_temperature")
    assert screening.WARMING_LIMIT_K == ranges.bounds("warming")[1]
    assert weather.YEAR_MIN_COVERAGE == extremes.YEAR_MIN_COVERAGE == screening.YEAR_MIN_COVERAGE
    assert weather.MONTH_MIN_COVERAGE == extremes.MONTH_MIN_COVERAGE == ranges.MONTH_MIN_COVERAGE
    assert track.MIN_RADIUS_M == ranges.MODEL_LIMITS["radius"].lo
    # the model accepts every misalignment the input range lets through
    assert ranges.bounds("misalignment")[1] <= ranges.MODEL_LIMITS["misalignment"].hi
