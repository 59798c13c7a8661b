"""Settings: every SAMPLEWRIGHT_* variable, its validation, and the README table."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import pytest

from samplewright.config import DEFAULT_OPEN_PATHS, PREFIX, Settings, available_cpus

REPO = Path(__file__).resolve().parents[2]
KEY = "k" * 24

#: One valid non-default value per setting, and what it becomes.
SAMPLES = {
    "max_body_bytes": ("131072", 131072),
    "body_timeout": ("2.5", 2.5),
    "log_level": ("debug", "DEBUG"),
    "access_log": ("off", False),
    "api_keys": (f"{KEY}, {KEY}x ,", (KEY, KEY + "x")),
    "open_paths": ("/healthz", ("/healthz",)),
    "cors_origins": ("https://portal.example.org,http://localhost:3000",
                     ("https://portal.example.org", "http://localhost:3000")),
    "cors_max_age": ("60", 60),
    "max_batch_items": ("500", 500),
    "max_batch_bytes": ("1048576", 1048576),
    "host": ("0.0.0.0", "0.0.0.0"),
    "port": ("9000", 9000),
    "workers": ("7", 7),
    "threads": ("2", 2),
    "timeout": ("45", 45),
    "graceful_timeout": ("5", 5),
    "drain_seconds": ("0", 0.0),
    "keepalive": ("0", 0),
    "max_requests": ("0", 0),
    "max_requests_jitter": ("10", 10),
    "limit_request_line": ("8190", 8190),
    "limit_request_fields": ("100", 100),
    "limit_request_field_size": ("4096", 4096),
    "metrics_dir": ("/dev/shm/m", "/dev/shm/m"),
}


def _readme_settings_rows() -> dict[str, str]:
    text = (REPO / "README.md").read_text()
    return dict(re.findall(r"^\| `(SAMPLEWRIGHT_[A-Z_]+)` \| `([^`]*)`", text, flags=re.M))


def test_every_field_has_a_sample():
    """The samples above cover every Settings field (a new field needs a sample and a README row)."""
    assert set(SAMPLES) == {f.name for f in dataclasses.fields(Settings)}


@pytest.mark.parametrize("name", sorted(SAMPLES))
def test_each_variable_sets_its_field(name):
    """SAMPLEWRIGHT_<FIELD> sets that field and nothing else."""
    raw, expected = SAMPLES[name]
    settings = Settings.from_environ({PREFIX + name.upper(): raw})
    assert getattr(settings, name) == expected
    base = Settings.from_environ({})
    others = {f.name for f in dataclasses.fields(Settings)} - {name}
    assert all(getattr(settings, o) == getattr(base, o) for o in others)


def test_defaults_match_the_dataclass():
    """An empty environment gives the dataclass defaults (workers: the available CPUs)."""
    assert Settings.from_environ({}) == Settings()
    assert Settings().workers == available_cpus() >= 1
    assert Settings().open_paths == DEFAULT_OPEN_PATHS and Settings().api_keys == ()
    assert Settings().cors_origins == ()


def test_readme_table_lists_every_variable_with_its_default():
    """The README's settings table has one row per variable, and the stated default is the real one."""
    rows = _readme_settings_rows()
    names = {PREFIX + f.name.upper() for f in dataclasses.fields(Settings)}
    assert set(rows) == names
    base = Settings()
    for f in dataclasses.fields(Settings):
        stated = rows[PREFIX + f.name.upper()]
        value = getattr(base, f.name)
        if f.name == "workers":
            assert stated == "CPUs available"
        elif isinstance(value, tuple):
            assert stated == (",".join(value) or "(none)")
        elif isinstance(value, bool):
            assert stated == str(value).lower()
        elif value is None:
            assert stated == "(none)"
        elif isinstance(value, float):
            assert stated == f"{value:g}", f.name
        else:
            assert stated == str(value), f.name


@pytest.mark.parametrize(("name", "raw", "words"), [
    ("WORKERS", "0", "between 1 and 128"),
    ("THREADS", "four", "must be an integer"),
    ("BODY_TIMEOUT", "nan", "between"),
    ("DRAIN_SECONDS", "-1", "between"),
    ("ACCESS_LOG", "maybe", "true or false"),
    ("LOG_LEVEL", "verbose", "DEBUG, INFO"),
    ("API_KEYS", "short", "key 1 must be 16 to 256"),
    ("API_KEYS", KEY + ",has space " + KEY, "key 2"),
    ("OPEN_PATHS", "/v1/power", "may list only"),
    ("CORS_ORIGINS", "*", "exact origins"),
    ("CORS_ORIGINS", "https://portal.example.org/path", "exact origins"),
    ("METRICS_DIR", "relative/dir", "absolute path"),
    ("PORT", "70000", "between 1 and 65535"),
])
def test_invalid_values_are_refused_naming_the_variable(name, raw, words):
    """A bad value is a ValueError that names the variable and says what is allowed."""
    with pytest.raises(ValueError) as err:
        Settings.from_environ({PREFIX + name: raw})
    assert PREFIX + name in str(err.value) and words in str(err.value)


def test_api_keys_never_appear_in_repr_or_errors():
    """Keys are left out of repr(settings), and a bad key is described, not echoed."""
    settings = Settings.from_environ({PREFIX + "API_KEYS": KEY})
    assert KEY not in repr(settings)
    bad = "x" * 15
    with pytest.raises(ValueError) as err:
        Settings.from_environ({PREFIX + "API_KEYS": bad})
    assert bad not in str(err.value)
