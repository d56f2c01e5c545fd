"""Golden cases: one folder each under tests/golden with inputs, ``args.txt`` and ``expected/``.

The command in ``args.txt`` runs in a copy of the folder; every file it writes must equal the one
in ``expected/`` byte for byte. After a deliberate change of output, rebuild the expectations with
``RECONCILE_REGENERATE_GOLDEN=1 pytest tests/test_golden.py`` and review the diff.
"""

from __future__ import annotations

import os
import shlex
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from reconcile.cli import app

GOLDEN = Path(__file__).parent / "golden"
CASES = sorted(p.name for p in GOLDEN.iterdir() if (p / "args.txt").exists())


@pytest.mark.parametrize("case", CASES)
def test_golden_case(case: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    source = GOLDEN / case
    for item in source.iterdir():
        if item.is_file() and item.name != "README.md":
            shutil.copy(item, tmp_path / item.name)
    monkeypatch.chdir(tmp_path)
    args = [*shlex.split((source / "args.txt").read_text()), "--out", "out"]
    result = CliRunner().invoke(app, args, env={"COLUMNS": "100"})
    assert result.exit_code in (0, 1), result.output
    produced = {p.name: p.read_bytes() for p in sorted((tmp_path / "out").iterdir())}
    expected_dir = source / "expected"
    if os.environ.get("RECONCILE_REGENERATE_GOLDEN"):
        shutil.rmtree(expected_dir, ignore_errors=True)
        expected_dir.mkdir()
        for name, content in produced.items():
            (expected_dir / name).write_bytes(content)
    expected = {p.name: p.read_bytes() for p in sorted(expected_dir.iterdir())}
    assert sorted(produced) == sorted(expected)
    for name, content in expected.items():
        assert produced[name].decode() == content.decode(), name
