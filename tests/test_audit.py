"""The run record's shortcuts give what the plain routes give.

- ``audit._utc_text`` writes the current time with ``isoformat``; the plain route is
  ``strftime("%Y-%m-%dT%H:%M:%S.%fZ")`` (Python's datetime documentation: isoformat with
  ``timespec="microseconds"`` always writes six digits, an aware UTC time ends in +00:00).
- ``audit._user`` reads the environment variables getpass.getuser reads, in its order (Python's
  getpass documentation: LOGNAME, USER, LNAME, USERNAME, the first set to a non-empty text),
  and the password database once per user id; the plain route is getpass.getuser itself.
"""

from __future__ import annotations

import datetime as dt
import getpass
import types

import pytest

from verify import audit

ENV = ("LOGNAME", "USER", "LNAME", "USERNAME")


@pytest.mark.parametrize("instant", [
    dt.datetime(2026, 12, 2, 17, 5, 9, 123456, tzinfo=dt.UTC),
    dt.datetime(2026, 1, 1, 0, 0, 0, 0, tzinfo=dt.UTC),  # no microseconds: still six digits
    dt.datetime(2031, 7, 30, 23, 59, 59, 999999, tzinfo=dt.UTC),
    dt.datetime(9999, 12, 31, 23, 59, 59, 1, tzinfo=dt.UTC),
])
def test_the_current_time_is_written_as_strftime_writes_it(monkeypatch, instant):
    class Clock(dt.datetime):
        @classmethod
        def now(cls, tz=None):
            assert tz is dt.UTC
            return instant

    monkeypatch.setattr(audit, "_dt", types.SimpleNamespace(datetime=Clock, UTC=dt.UTC))
    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    want = instant.strftime("%Y-%m-%dT%H:%M:%S.%fZ")
    assert audit._utc_text(None) == want
    assert audit.utc_now() == want


def test_the_fixed_time_is_the_epochs_to_the_second(monkeypatch):
    assert audit._utc_text(0) == "1970-01-01T00:00:00Z"
    assert audit._utc_text(1_700_000_000) == "2023-11-14T22:13:20Z"
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    assert audit.utc_now() == "2023-11-14T22:13:20Z"


def _plain_user() -> str:
    try:
        return getpass.getuser()
    except (OSError, KeyError):
        return "unknown"


@pytest.mark.parametrize("env", [
    {},  # none set: the password database (or "unknown" where getuser fails)
    {"LOGNAME": "ann", "USER": "bob"},
    {"USER": "bob", "USERNAME": "dan"},
    {"LOGNAME": "", "LNAME": "cy", "USERNAME": "dan"},  # an empty text is passed over
    {"USERNAME": "dan"},
])
def test_the_user_is_getpass_getusers(monkeypatch, env):
    for name in ENV:
        monkeypatch.delenv(name, raising=False)
    for name, value in env.items():
        monkeypatch.setenv(name, value)
    for _ in range(2):  # the second time the account's name is the one looked up before
        assert audit._user() == _plain_user()
