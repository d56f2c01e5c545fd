"""The profiles shown in docs/profiles.md and sample_data/profiles/ are valid profiles (the docs'
examples are run as tests)."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest

from reconcile.errors import ConfigError
from reconcile.io.readers.profiles import load_profile, profile_from_dict

ROOT = Path(__file__).parents[2]
DOC = (ROOT / "docs" / "profiles.md").read_text(encoding="utf-8")
BLOCKS = re.findall(r"```toml\n(.*?)```", DOC, flags=re.DOTALL)
SAMPLES = sorted((ROOT / "sample_data" / "profiles").glob("*.toml"))


def test_the_doc_shows_a_profile_for_each_kind_of_source() -> None:
    assert len(BLOCKS) >= 5


@pytest.mark.parametrize("block", BLOCKS, ids=[f"doc-{n}" for n in range(len(BLOCKS))])
def test_every_profile_in_the_doc_is_valid(block: str) -> None:
    profile_from_dict(tomllib.loads(block), "docs/profiles.md")


@pytest.mark.parametrize("path", SAMPLES, ids=[p.name for p in SAMPLES])
def test_every_sample_profile_is_valid(path: Path) -> None:
    assert load_profile(path).name


def test_a_profile_error_names_the_file_and_every_bad_key(tmp_path: Path) -> None:
    path = tmp_path / "broker.toml"
    path.write_text('[numbers]\ndecimal = ";"\n[source]\ndelimiter = "::"\n', encoding="utf-8")
    with pytest.raises(ConfigError) as caught:
        load_profile(path)
    assert str(caught.value).splitlines() == [
        f"{path}, key source.delimiter: expected one character other than a quote or line "
        "break, found '::'",
        f"{path}, key numbers.decimal: expected '.' or ',', found ';'",
    ]


def test_a_parquet_dump_through_a_profile(tmp_path: Path) -> None:
    from decimal import Decimal

    import pyarrow as pa
    import pyarrow.parquet as pq

    from reconcile.errors import ValidationError
    from reconcile.io.readers import read_fills

    block = next(b for b in BLOCKS if "Data team" in b)
    (tmp_path / "p.toml").write_text(block, encoding="utf-8")
    table = {
        "exec_id": ["e1"],
        "symbol": ["CRVN"],
        "side": ["buy"],
        "qty": pa.array([Decimal("12.5")], pa.decimal128(6, 2)),
        "px": pa.array([Decimal("41.0625")], pa.decimal128(10, 4)),
        "exec_time": pa.array([1_793_000_000_000_000], pa.timestamp("us", tz="UTC")),
        "currency": ["USD"],
    }
    pq.write_table(pa.table(table), tmp_path / "dump.parquet")
    fills = read_fills(tmp_path / "dump.parquet", profile=tmp_path / "p.toml")
    assert fills["price"].tolist() == [Decimal("41.0625")]
    assert fills["account"].tolist() == ["LMC-EQ"]
    table["px"] = pa.array([41.0625], pa.float64())
    pq.write_table(pa.table(table), tmp_path / "dump.parquet")
    with pytest.raises(ValidationError, match="column px: expected exact decimal values"):
        read_fills(tmp_path / "dump.parquet", profile=tmp_path / "p.toml")
