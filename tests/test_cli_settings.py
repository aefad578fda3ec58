"""`realbasis settings` shows the value in force: environment over default (the settings
order documented in DEVELOPERS.md), and never prints a secret."""

from __future__ import annotations

from pipeline.cli import main


def test_settings_command_shows_environment_over_default(monkeypatch, capsys):
    monkeypatch.setenv("REALBASIS_PORT", "9123")
    monkeypatch.setenv("REALBASIS_EDITOR_TOKEN", "s3cret-value")
    monkeypatch.delenv("REALBASIS_MAX_ROWS", raising=False)
    assert main(["settings"]) == 0
    out = capsys.readouterr().out
    assert "REALBASIS_PORT = 9123" in out
    assert "REALBASIS_MAX_ROWS = 2000000" in out
    assert "REALBASIS_EDITOR_TOKEN = (set, not shown)" in out
    assert "s3cret-value" not in out


def test_settings_command_refuses_a_bad_environment_value(monkeypatch, capsys):
    monkeypatch.setenv("REALBASIS_PORT", "eighty")
    assert main(["settings"]) == 2
    err = capsys.readouterr().err
    assert "[SE001]" in err and "REALBASIS_PORT" in err
