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
