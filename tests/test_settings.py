"""Settings: every HAARLINE_* variable is read through Settings, validated, and named in errors."""

import pytest
from haarline.service.errors import SettingsError
from haarline.service.settings import Settings


def env(tmp_path, **values):
    return {"HAARLINE_DATA_DIR": str(tmp_path), **{f"HAARLINE_{k}": v for k, v in values.items()}}


@pytest.mark.parametrize(
    "old,new", [("MAX_COST", "MAX_WORK"), ("MAX_SCORE_COST", "MAX_SCORE_WORK")]
)
def test_a_renamed_variable_is_refused_with_its_new_name(tmp_path, old, new):
    with pytest.raises(SettingsError, match=f"HAARLINE_{old} was renamed HAARLINE_{new}"):
        Settings.from_env(env(tmp_path, **{old: "1e9"}))
    assert Settings.from_env(env(tmp_path, **{new: "1e9"})).model_dump()[new.lower()] == 1e9


def test_the_page_secret_is_a_setting_and_never_shown(tmp_path):
    settings = Settings.from_env(env(tmp_path, PAGE_SECRET="s3cret-for-links-0123"))
    assert settings.page_secret.get_secret_value() == "s3cret-for-links-0123"
    assert "s3cret" not in repr(settings) and "s3cret" not in str(settings.model_dump())
    with pytest.raises(SettingsError, match="HAARLINE_PAGE_SECRET: .*16"):
        Settings.from_env(env(tmp_path, PAGE_SECRET="short"))


def test_cors_origins_are_a_comma_separated_allow_list(tmp_path):
    origins = "https://wiki.example.org, http://127.0.0.1:3000"
    settings = Settings.from_env(env(tmp_path, CORS_ORIGINS=origins))
    assert settings.cors_origins == ("https://wiki.example.org", "http://127.0.0.1:3000")
    assert Settings.from_env(env(tmp_path)).cors_origins == ()
    for bad in ("*", "https://wiki.example.org/page", "wiki.example.org"):
        with pytest.raises(SettingsError, match="HAARLINE_CORS_ORIGINS: .* is not an origin"):
            Settings.from_env(env(tmp_path, CORS_ORIGINS=bad))


def test_flags_and_retention(tmp_path):
    assert Settings.from_env(env(tmp_path, SHARED_RESULT_CACHE="1")).shared_result_cache
    assert not Settings.from_env(env(tmp_path)).shared_result_cache
    with pytest.raises(SettingsError, match="HAARLINE_SHARED_RESULT_CACHE: expected 0 or 1"):
        Settings.from_env(env(tmp_path, SHARED_RESULT_CACHE="maybe"))
    assert Settings.from_env(env(tmp_path)).retention_days is None
    assert Settings.from_env(env(tmp_path, RETENTION_DAYS="30")).retention_days == 30
    with pytest.raises(SettingsError, match="HAARLINE_RETENTION_DAYS"):
        Settings.from_env(env(tmp_path, RETENTION_DAYS="0"))


def test_no_module_reads_haarline_variables_past_the_settings():
    from pathlib import Path

    service = Path(__file__).parents[1] / "service"
    readers = [
        str(p.relative_to(service))
        for p in service.rglob("*.py")
        if p.name != "settings.py" and "environ" in p.read_text() and "HAARLINE_" in p.read_text()
    ]
    assert readers == []


def test_the_dask_settings_are_checked_at_start_up(tmp_path):
    address = "tcp://10.0.0.5:8786"
    settings = Settings.from_env(env(tmp_path, DASK_SCHEDULER=address, DASK_UNIT="block"))
    assert (settings.dask_scheduler, settings.dask_unit) == (address, "block")
    assert Settings.from_env(env(tmp_path, DASK_SCHEDULER=address)).dask_unit == "job"
    with pytest.raises(SettingsError, match="HAARLINE_DASK_SCHEDULER: expected a Dask sched"):
        Settings.from_env(env(tmp_path, DASK_SCHEDULER="10.0.0.5:8786"))
    with pytest.raises(SettingsError, match="DASK_UNIT: 'block' .* set HAARLINE_DASK_SCHED"):
        Settings.from_env(env(tmp_path, DASK_UNIT="block"))
    with pytest.raises(SettingsError, match="HAARLINE_DASK_UNIT: .*'job' or 'block'"):
        Settings.from_env(env(tmp_path, DASK_SCHEDULER=address, DASK_UNIT="task"))
