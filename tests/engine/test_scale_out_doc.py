"""docs/scale-out.md's worked example takes only what the code takes.

The example spec (``examples/spark_cluster/graph.yaml``) loads; every ``engine:`` section of
the page loads in its place and passes the engine's setting checks, with every
``cluster_settings`` entry reaching the Spark session's settings; every ``graphmill`` command
line of the page (also those given to ``spark-submit``) parses with the CLI's own parser and
its engine flags apply to the example spec. No Spark is started.
"""

from __future__ import annotations

import argparse
import re
import shlex
from pathlib import Path
from typing import Any

import pytest
import yaml

from graphmill.cli import _parser, _with_engine_flags
from graphmill.spec import load_spec, read_spec_document, spec_from_dict

ROOT = Path(__file__).resolve().parents[2]
PAGE = ROOT / "docs" / "scale-out.md"
EXAMPLE = ROOT / "examples" / "spark_cluster" / "graph.yaml"
BLOCK = re.compile(r"^```(\w+)\n(.*?)^```$", re.M | re.S)


def blocks(kind: str) -> list[str]:
    return [body for lang, body in BLOCK.findall(PAGE.read_text(encoding="utf-8")) if lang == kind]


def engine_sections() -> list[dict[str, Any]]:
    docs = [yaml.safe_load(body) for body in blocks("yaml")]
    return [d["engine"] for d in docs if isinstance(d, dict) and "engine" in d]


def command_lines() -> list[list[str]]:
    """graphmill's arguments of every command line of the page's shell blocks."""
    lines = []
    for body in blocks("sh"):
        for line in body.replace("\\\n", " ").splitlines():
            words = shlex.split(line, comments=True)
            if words[:1] == ["graphmill"]:
                lines.append(words[1:])
            elif words[:1] == ["spark-submit"]:
                app = next(i for i, w in enumerate(words) if w.endswith(".py"))
                lines.append(words[app + 1 :])
    return lines


def test_the_example_spec_is_the_page_s_first_engine_section() -> None:
    spec = load_spec(EXAMPLE)
    first = engine_sections()[0]
    assert spec.engine.kind == first["kind"] == "spark"
    assert spec.engine.cluster == first["cluster"]
    assert spec.engine.cluster_settings == first["cluster_settings"]


@pytest.mark.parametrize("section", engine_sections(), ids=lambda s: s["cluster"].split(":")[0])
def test_every_engine_section_loads_and_reaches_spark(section: dict[str, Any]) -> None:
    pytest.importorskip("pyspark")
    from graphmill.engine import check_settings
    from graphmill.engine.spark._session import _settings

    document = read_spec_document(EXAMPLE)
    document["engine"] = section
    engine = spec_from_dict(document, base_dir=EXAMPLE.parent).engine
    check_settings(engine)
    conf = _settings(engine)
    for name, value in section.get("cluster_settings", {}).items():
        assert conf[name] == str(value)


def test_the_page_has_commands_for_every_route() -> None:
    lines = command_lines()
    assert len(lines) >= 5
    assert sum(1 for body in blocks("sh") for ln in body.splitlines() if "spark-submit" in ln) >= 2
    assert {c["cluster"].split(":")[0] for c in engine_sections()} >= {"spark", "yarn", "k8s", "sc"}


@pytest.mark.parametrize("words", command_lines(), ids=" ".join)
def test_every_command_line_parses_and_applies(words: list[str]) -> None:
    pytest.importorskip("pyspark")
    args: argparse.Namespace = _parser().parse_args(words)
    assert (ROOT / args.spec).resolve() == EXAMPLE.resolve()
    spec = _with_engine_flags(load_spec(ROOT / args.spec), args)
    assert spec.engine.kind == (args.engine or "spark")
    assert spec.engine.cluster == (args.cluster or load_spec(EXAMPLE).engine.cluster)
