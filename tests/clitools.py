"""Running the command line in tests: in this process, or as ``python -m rank`` in a subprocess."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from rank.cli import main


def run_cli(argv: list[str], capsys) -> tuple[int, str, str]:
    """Exit status, stdout and stderr of ``peakrank ARGV`` run in this process."""
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse leaves through SystemExit
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def run_module(*args: str, cwd: Path | None = None, timeout: float = 120) -> subprocess.CompletedProcess:
    """``python -m rank ARGS`` in a subprocess."""
    return subprocess.run([sys.executable, "-m", "rank", *args], check=False, capture_output=True, text=True,
                          timeout=timeout, cwd=cwd)


def one_line_error(code: int, out: str, err: str) -> str:
    """The single stderr line of a refused input (exit 2, no traceback, nothing on stdout)."""
    assert code == 2, (code, err)
    assert "Traceback" not in err, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert lines[0].startswith("peakrank")
    assert out == ""
    return lines[0]
