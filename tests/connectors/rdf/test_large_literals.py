"""Literals of several megabytes through both dump sources; beyond the parser's limit, one
clear error naming the line."""

from __future__ import annotations

from pathlib import Path

import pytest

from graphmill.connectors.rdf._files import TERM_LIMIT
from graphmill.errors import InputError
from tests.connectors.rdf.rdfsource_helpers import EX, KINDS, pull_snapshot, rdf_spec

TYPE = "http://www.w3.org/1999/02/22-rdf-syntax-ns#type"


def _dump(path: Path, size: int) -> str:
    text = 'ab\\t\\"c\\n' * (size // 9)  # escapes: the TSV results escape them again
    path.write_text(
        f"<{EX}a> <{TYPE}> <{EX}Doc> .\n"
        f"<{EX}b> <{TYPE}> <{EX}Doc> .\n"
        f'<{EX}a> <{EX}body> "{text}"@en .\n',
        encoding="utf-8",
    )
    return text.replace("\\t", "\t").replace('\\"', '"').replace("\\n", "\n")


def _spec(tmp_path: Path, kind: str):
    return rdf_spec(
        tmp_path,
        kind,
        ["dump.nt"],
        {"doc": {"match": "ex:Doc", "properties": {"body": {"from": "ex:body"}}}},
    )


@pytest.mark.parametrize("kind", KINDS)
def test_a_literal_of_several_megabytes_is_read_whole(tmp_path: Path, kind: str) -> None:
    expected = _dump(tmp_path / "dump.nt", 6 << 20)
    docs = pull_snapshot(_spec(tmp_path, kind)).vertices("doc").to_pylist()
    by_id = {row["vertex_id"]: row["body"] for row in docs}
    assert by_id[f"{EX}a"] == expected and by_id[f"{EX}b"] is None


@pytest.mark.parametrize("kind", KINDS)
def test_a_term_beyond_the_parser_limit_names_its_line(tmp_path: Path, kind: str) -> None:
    _dump(tmp_path / "dump.nt", TERM_LIMIT + 9)
    spec = _spec(tmp_path, kind)
    with pytest.raises(InputError, match=r"dump\.nt:3: a term .* longer than the RDF parser"):
        pull_snapshot(spec)
    assert not spec.output.snapshot.exists()
