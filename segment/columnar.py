"""The chunk record as a column table: an Arrow schema that mirrors the JSON Schema, and Parquet.

For people who read chunks with DuckDB, Spark or pandas. The Arrow schema is derived from
`segment/schema/chunk.schema.json`, field by field and in the same order, so a field added to the
record reaches the table without a second definition:

- strings, enums and nullable strings -> `string`; integers -> `int64`; booleans -> `bool`;
- arrays of strings (breadcrumb, blocks) -> `list<string>`;
- locators (`[first, last]` or null: lines, pages, cells) -> `list<int64>`, null where absent;
- objects (page properties) -> `string` holding the object as JSON text (its keys differ from page
  to page, so no fixed struct fits them); such columns carry `docsegment.encoding: json` in their
  field metadata.

Fields a record has beyond the schema (the schema allows them) are not columns. pyarrow is an
optional dependency (`pip install 'docsegment[cluster]'`).
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Iterator
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

from segment.errors import SettingsError

JSON_ENCODED = b"json"
"""Field metadata value (`docsegment.encoding`) of a column that holds JSON text."""


def _pyarrow() -> Any:
    try:
        import pyarrow
    except ImportError as exc:  # pragma: no cover - depends on the environment
        raise SettingsError("column output needs pyarrow: pip install 'docsegment[cluster]'") from exc
    return pyarrow


@cache
def record_schema() -> dict[str, Any]:
    """The chunk record's JSON Schema, as shipped in the package."""
    text = resources.files("segment").joinpath("schema/chunk.schema.json").read_text(encoding="utf-8")
    schema: dict[str, Any] = json.loads(text)
    return schema


def _types(spec: dict[str, Any]) -> set[str]:
    """The JSON types a property spec admits (enums count as their values' types)."""
    found: set[str] = set()
    kind = spec.get("type")
    if isinstance(kind, str):
        found.add(kind)
    elif isinstance(kind, list):
        found.update(kind)
    for option in spec.get("oneOf", []) + spec.get("anyOf", []):
        found |= _types(option)
    if "enum" in spec:
        found |= {"null" if v is None else "string" if isinstance(v, str) else "other" for v in spec["enum"]}
    return found


def _items(spec: dict[str, Any]) -> dict[str, Any]:
    for option in [spec, *spec.get("oneOf", []), *spec.get("anyOf", [])]:
        if "items" in option:
            items: dict[str, Any] = option["items"]
            return items
    return {}


def arrow_type(name: str, spec: dict[str, Any]) -> Any:
    """The Arrow type of one record field, from its JSON Schema spec."""
    pa = _pyarrow()
    kinds = _types(spec) - {"null"}
    if kinds == {"string"}:
        return pa.string()
    if kinds == {"integer"}:
        return pa.int64()
    if kinds == {"boolean"}:
        return pa.bool_()
    if kinds == {"object"}:
        return pa.string()  # JSON text: see the module docstring
    if kinds == {"array"}:
        item = _types(_items(spec)) - {"null"}
        if item == {"string"}:
            return pa.list_(pa.string())
        if item == {"integer"}:
            return pa.list_(pa.int64())
    raise TypeError(f"chunk record field {name!r}: no column type for JSON Schema {spec}")


@cache
def arrow_schema() -> Any:
    """The fixed Arrow schema of chunk tables (one column per record field, in record order)."""
    pa = _pyarrow()
    columns = []
    for name, spec in record_schema()["properties"].items():
        kind = arrow_type(name, spec)
        meta = {b"docsegment.encoding": JSON_ENCODED} if _types(spec) - {"null"} == {"object"} else None
        columns.append(pa.field(name, kind, nullable=True, metadata=meta))
    return pa.schema(columns, metadata={b"docsegment.schema": b"chunk.schema.json"})


def _json_columns() -> frozenset[str]:
    schema = arrow_schema()
    return frozenset(
        f.name for f in schema if f.metadata and f.metadata.get(b"docsegment.encoding") == JSON_ENCODED
    )


def to_row(record: dict[str, Any]) -> dict[str, Any]:
    """One chunk record (its JSON form) as a table row: schema fields only, objects as JSON text."""
    encoded = _json_columns()
    row: dict[str, Any] = {}
    for name in arrow_schema().names:
        value = record.get(name)
        if name in encoded and value is not None:
            value = json.dumps(value, ensure_ascii=False, sort_keys=True, separators=(",", ":"))
        elif isinstance(value, tuple):
            value = list(value)
        row[name] = value
    return row


def records_table(records: Iterable[dict[str, Any]]) -> Any:
    """An Arrow table of chunk records (their JSON form), with the fixed schema."""
    pa = _pyarrow()
    return pa.Table.from_pylist([to_row(r) for r in records], schema=arrow_schema())


def iter_output_records(out: Path) -> Iterator[dict[str, Any]]:
    """Every chunk record of an output folder (OUT/chunks/**/*.jsonl), files in name order."""
    chunks = Path(out) / "chunks"
    if not chunks.is_dir():
        raise SettingsError(f"{out}: not a docsegment output folder (no chunks/ inside)")
    for path in sorted(chunks.rglob("*.jsonl")):
        with path.open("rb") as fh:
            for line in fh:
                if line.strip():
                    yield json.loads(line)


def output_table(out: Path) -> Any:
    """All chunks of an output folder as one Arrow table."""
    return records_table(iter_output_records(out))


def write_dataset(table: Any, dest: Path) -> list[Path]:
    """Write a chunk table as a Parquet dataset partitioned by format (`format=<name>/` folders).

    Existing files of an earlier export under `dest` are replaced; returns the files written.
    """
    pa = _pyarrow()
    import pyarrow.dataset as ds

    dest = Path(dest)
    dest.mkdir(parents=True, exist_ok=True)
    ds.write_dataset(
        table,
        dest,
        format="parquet",
        partitioning=ds.partitioning(pa.schema([pa.field("format", pa.string())]), flavor="hive"),
        existing_data_behavior="delete_matching",
        basename_template="part-{i}.parquet",
    )
    return sorted(dest.rglob("*.parquet"))


def read_dataset(dest: Path) -> Any:
    """A Parquet dataset written by `write_dataset`, read back as one table with the fixed schema."""
    import pyarrow.dataset as ds

    pa = _pyarrow()
    dataset = ds.dataset(
        Path(dest),
        format="parquet",
        partitioning=ds.partitioning(pa.schema([pa.field("format", pa.string())]), flavor="hive"),
    )
    return dataset.to_table().select(arrow_schema().names).cast(arrow_schema())
