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
    assert "tracer demo" in main and "pytest" in tests
    ci = (ROOT / ".ci" / "run").read_text().strip().splitlines()
    assert ci[-1] == tests


def test_the_main_command_runs_on_the_bundled_sample(tmp_path):
    main = _commands()[0]
    demo = shlex.split(main.split("&&")[1])
    assert demo == ["tracer", "demo"]
    r = subprocess.run([sys.executable, "-m", "tracer", "demo"], capture_output=True, text=True, cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    assert (tmp_path / "tracer-demo-overlay.png").exists()
    # The demo's table in the README is pasted from this very run (paths aside, which differ
    # from one checkout to another).
    readme = (ROOT / "README.md").read_text()
    for line in r.stdout.splitlines():
        if line.strip().startswith("from photo "):
            continue
        assert line in readme, line


def test_the_worked_sheet_example_is_pasted_from_a_real_run():
    r = subprocess.run([sys.executable, "-m", "tracer", "measure", "tracer/examples/waney-joist.toml"],
                       capture_output=True, text=True, cwd=ROOT)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() in (ROOT / "README.md").read_text()
