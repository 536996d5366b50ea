"""Column output: the Arrow schema mirrors the JSON Schema, and `segment export --parquet` reads back
the same chunks with pyarrow and with DuckDB (a general-purpose engine, as a user would read it)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from segment.cli import cli
from tests.conftest import FIXTURES

pa = pytest.importorskip("pyarrow", reason="column output needs the cluster extra (pyarrow)")

from segment.columnar import arrow_schema, read_dataset, record_schema  # noqa: E402
from segment.daemon import reconcile  # noqa: E402


def chunk_records(out: Path) -> list[dict[str, object]]:
    return [
        json.loads(line)
        for path in sorted((out / "chunks").rglob("*.jsonl"))
        for line in path.read_text(encoding="utf-8").splitlines()
    ]


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("demo-out")
    reconcile(FIXTURES / "demo", out)
    return out


def test_the_arrow_schema_has_one_column_per_record_field_in_record_order() -> None:
    fields = list(record_schema()["properties"])
    assert arrow_schema().names == fields
    assert fields[:4] == ["id", "source", "format", "seq"]


def test_column_types_follow_the_json_types_of_the_fields() -> None:
    schema = arrow_schema()
    assert schema.field("id").type == pa.string()
    assert schema.field("seq").type == pa.int64()
    assert schema.field("oversize").type == pa.bool_()
    assert schema.field("breadcrumb").type == pa.list_(pa.string())
    assert schema.field("lines").type == pa.list_(pa.int64())  # [first, last] or null
    assert schema.field("anchor").type == pa.string()
    for name, spec in record_schema()["properties"].items():  # objects travel as JSON text
        if spec.get("type") in ("object", ["object", "null"]):
            assert schema.field(name).metadata[b"docsegment.encoding"] == b"json"


def test_export_writes_a_dataset_partitioned_by_format_that_pyarrow_reads_back(
    built: Path, tmp_path: Path
) -> None:
    dest = tmp_path / "parquet"
    result = CliRunner().invoke(cli, ["export", str(built), "--parquet", str(dest)])
    assert result.exit_code == 0, result.output
    records = chunk_records(built)
    formats = {r["format"] for r in records}
    assert {p.name for p in dest.iterdir()} == {f"format={f}" for f in formats}
    table = read_dataset(dest)
    assert table.schema.equals(arrow_schema(), check_metadata=False)
    assert table.num_rows == len(records)
    by_id = {row["id"]: row for row in table.to_pylist()}
    assert set(by_id) == {r["id"] for r in records}
    for record in records:
        row = by_id[record["id"]]
        assert row["text"] == record["text"] and row["breadcrumb"] == record["breadcrumb"]
        assert row["lines"] == record["lines"] and row["pages"] == record["pages"]


def test_duckdb_reads_the_export_with_the_same_rows(built: Path, tmp_path: Path) -> None:
    duckdb = pytest.importorskip("duckdb", reason="DuckDB is a test dependency")
    dest = tmp_path / "parquet"
    assert CliRunner().invoke(cli, ["export", str(built), "--parquet", str(dest)]).exit_code == 0
    records = chunk_records(built)
    glob = (dest / "**" / "*.parquet").as_posix()
    rows = duckdb.sql(
        f"SELECT id, text, format, breadcrumb FROM read_parquet('{glob}', hive_partitioning = true)"
    ).fetchall()
    assert len(rows) == len(records)
    assert {(r[0], r[1], r[2]) for r in rows} == {(r["id"], r["text"], r["format"]) for r in records}
    assert all(isinstance(r[3], list) for r in rows)  # lists stay lists


def test_export_of_a_folder_that_is_not_an_output_is_a_usage_error(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["export", str(tmp_path), "--parquet", str(tmp_path / "p")])
    assert result.exit_code == 2 and "not a docsegment output folder" in result.output
