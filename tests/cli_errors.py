"""What every command-line error looks like: one line on stderr, its exit code, and under --json
also one JSON document on stdout, `{"error": {"kind", "message", "place", "exit_code"}}`."""

from __future__ import annotations

import json


def assert_one_line_error(result, *fragments: str, exit_code: int = 2) -> dict | None:
    """Check the shape of an error; returns the JSON error document when there is one."""
    assert result.exit_code == exit_code, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.stderr
    for fragment in fragments:
        assert fragment in lines[0], lines[0]
    if not result.stdout:
        return None
    error = json.loads(result.stdout)["error"]
    assert set(error) == {"kind", "message", "place", "exit_code"}
    assert error["exit_code"] == exit_code
    assert lines[0] == "lockkeeper: " + (f"{error['place']}: " if error["place"] else "") + \
        error["message"]
    return error
