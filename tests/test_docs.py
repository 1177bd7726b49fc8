"""The documentation stays in step with the code."""
from __future__ import annotations

import pathlib
import re

import powercore as pc

ROOT = pathlib.Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _bash_blocks(text: str) -> list[str]:
    return re.findall(r"```bash\n(.*?)```", text, flags=re.S)


def test_every_design_is_documented_in_the_readme():
    """Each registered design id appears in the README's design table."""
    missing = [d.id for d in pc.designs() if f"| `{d.id}` |" not in README]
    assert missing == []


def test_ci_runs_the_readme_test_command():
    """.ci/run's TEST_CMD is, word for word, the README's test command."""
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    cmd = re.search(r'^TEST_CMD="(.*)"$', ci, flags=re.M).group(1)
    quick = README.split("## Quick start", 1)[1].split("## Using it", 1)[0]
    blocks = [b.strip() for b in _bash_blocks(quick)]
    assert len(blocks) == 2, "the quick start has exactly two commands"
    assert blocks[1] == cmd


def test_every_parameter_has_a_doc_and_unit_or_kind():
    """Every registered parameter carries a doc string, and every real one a unit."""
    bad = [(d.id, s.name) for d in pc.designs() for s in d.params
           if not s.doc or (s.kind == "real" and not s.unit)]
    assert bad == []
