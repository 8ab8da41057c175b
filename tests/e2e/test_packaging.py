"""The README's two commands are what CI runs, and the project's layout contract holds."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _bash_blocks(text):
    return [b.strip() for b in re.findall(r"```bash\n(.*?)```", text, flags=re.S)]


def test_ci_runs_the_readme_commands():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    install, tests = _bash_blocks(readme)[:2]
    assert "pip install torch==2.13.0" in install and "netdim demo" in install
    assert install in ci.splitlines()
    assert tests in ci.splitlines()


def test_readme_opens_with_the_job_and_carries_the_caution():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    first = readme.split("\n\n")[1]
    assert "netdim" in first and "mean dimension" in first
    assert "not a safety validation" in readme


def test_layout():
    for p in ("README.md", "DEVELOPERS.md", "pyproject.toml", "audit", "tests", "model_zoo", "reports"):
        assert (ROOT / p).exists(), p
