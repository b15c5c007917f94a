"""The command-line shell: help, and the typed errors turned into one line and an exit code."""

from click.testing import CliRunner

from registry.cli import main


def test_help_lists_the_command():
    result = CliRunner().invoke(main, ["--help"])
    assert result.exit_code == 0
    assert "Lockkeeper" in result.output


def test_unknown_command_is_a_usage_error_with_exit_2():
    result = CliRunner().invoke(main, ["no-such-command"])
    assert result.exit_code == 2
