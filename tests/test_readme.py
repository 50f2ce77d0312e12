"""The README's two fresh-machine commands stay true: CI runs the test command, the main one works."""

from __future__ import annotations

import re
import shlex
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).parents[1]


def _commands() -> list[str]:
    text = (ROOT / "README.md").read_text()
    return re.findall(r"```sh\n(python3 -m pip install [^\n]+)\n```", text)


def test_readme_has_the_two_commands_and_ci_runs_the_test_one():
    main, tests = _commands()[:2]
    assert "tracer measure" in main and "pytest" in tests
    ci = (ROOT / ".ci" / "run").read_text().strip().splitlines()
    assert ci[-1] == tests


def test_the_main_command_runs_on_the_bundled_sheet():
    main = _commands()[0]
    measure = shlex.split(main.split("&&")[1])
    assert measure[:2] == ["tracer", "measure"]
    assert (ROOT / measure[2]).is_file()
    r = subprocess.run([sys.executable, "-m", "tracer", *measure[1:]], capture_output=True, text=True, cwd=ROOT)
    assert r.returncode == 0, r.stderr
    # The worked example in the README is pasted from this very run.
    readme = (ROOT / "README.md").read_text()
    assert r.stdout.strip() in readme
