"""Settings: defaults < SHOCKPATH_* environment < the factory's mapping; bad values stop start-up."""

from __future__ import annotations

import pytest

from service.http.settings import SettingsError, load_settings


@pytest.mark.parametrize(
    ("environ", "names"),
    [
        ({"SHOCKPATH_MAX_BODY_BYTES": "lots"}, "SHOCKPATH_MAX_BODY_BYTES"),
        ({"SHOCKPATH_MAX_BODY_BYTES": "-4"}, "SHOCKPATH_MAX_BODY_BYTES"),
        ({"SHOCKPATH_LOG_LEVEL": "chatty"}, "SHOCKPATH_LOG_LEVEL"),
        ({"SHOCKPATH_BAND_THREADS": "0"}, "SHOCKPATH_BAND_THREADS"),
        ({"SHOCKPATH_METRICS_REQUIRE_KEY": "maybe"}, "SHOCKPATH_METRICS_REQUIRE_KEY"),
        ({"SHOCKPATH_API_KEYS": "short"}, "SHOCKPATH_API_KEYS"),
        ({"SHOCKPATH_API_KEYS_FILE": "/nonexistent/keys"}, "SHOCKPATH_API_KEYS_FILE"),
    ],
)
def test_invalid_configuration_stops_start_up_naming_the_variable(environ, names):
    with pytest.raises(SettingsError, match=names):
        load_settings(environ=environ)


def test_settings_come_from_the_environment_and_the_factory_mapping_wins():
    settings = load_settings(
        {"band_threads": 1}, environ={"SHOCKPATH_BAND_THREADS": "3", "SHOCKPATH_LOG_LEVEL": "debug"}
    )
    assert settings.band_threads == 1 and settings.log_level == "DEBUG"
