"""The plan's catalogue, the engine registry, the spec's ``engine`` key and the CLI flags."""

from __future__ import annotations

import inspect
from pathlib import Path

import numpy as np
import pyarrow as pa
import pytest

from graphmill.cli import main
from graphmill.engine import (
    OPERATIONS,
    Engine,
    available_engines,
    engine_class,
    memory_bytes,
    open_engine,
    spill_folder_of,
)
from graphmill.errors import ExitCode, SpecError
from graphmill.spec import EngineSpec
from tests.validate._graphs import make_spec


def test_every_operation_names_an_engine_method_and_schemas() -> None:
    for op in OPERATIONS.values():
        assert inspect.isfunction(getattr(Engine, op.method)), op.name
        assert op.stage in ("pull", "check", "build")
        assert op.contract and all(isinstance(s, pa.Schema) for s in op.inputs.values())


@pytest.mark.parametrize("kind", ["reference", "local", "spark"])
def test_native_lists_exactly_what_an_engine_implements(kind: str) -> None:
    if kind == "spark":
        pytest.importorskip("pyspark")
    cls = engine_class(kind)
    mine = {
        op.name for op in OPERATIONS.values() if op.method in vars(cls) or cls.kind == "reference"
    }
    assert set(cls.native) == mine


def test_unknown_engine_gets_a_did_you_mean() -> None:
    with pytest.raises(SpecError) as err:
        engine_class("locale")
    assert "did you mean 'local'" in err.value.one_line()
    assert available_engines() == ["local", "reference", "spark"]


def test_memory_sizes() -> None:
    assert memory_bytes("2GiB") == 2 * 2**30
    assert memory_bytes("512 MB") == 512 * 10**6
    with pytest.raises(SpecError, match="not a memory size"):
        memory_bytes("lots")


def test_spec_engine_section(tmp_path: Path) -> None:
    spec = make_spec(tmp_path)
    assert spec.engine == EngineSpec()  # local, the engine's own resources
    assert spill_folder_of(spec) == Path(f"{spec.output.bundle}.spill")
    spec = make_spec(
        tmp_path,
        engine={"kind": "reference", "memory_limit": "1GiB", "spill_folder": "s", "threads": 1},
    )
    assert spec.engine == EngineSpec("reference", "1GiB", tmp_path / "s", 1)
    with pytest.raises(SpecError, match="engine"):
        make_spec(tmp_path, engine={"memory_limit": "much"})


def test_local_engine_applies_its_settings(tmp_path: Path) -> None:
    settings = EngineSpec(memory_limit="300MiB", threads=1, spill_folder=tmp_path / "spill")
    with open_engine(settings) as engine:
        connection = engine.session.connection  # type: ignore[attr-defined]
        rows = connection.sql(
            "SELECT current_setting('threads'), current_setting('temp_directory')"
        ).fetchall()
        assert rows == [(1, str(tmp_path / "spill"))]
        limit = connection.sql("SELECT current_setting('memory_limit')").fetchall()[0][0]
        assert limit.replace(" ", "") in ("300.0MiB", "314.5MB")  # DuckDB's own rendering
    assert not (tmp_path / "spill").exists()  # nothing spilled, nothing left


def test_cli_refuses_an_unknown_engine_flag(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    spec = tmp_path / "spec.yaml"
    spec.write_text(
        "spec_version: 1\nsource: {kind: table-files, vertex_files: [{path: ../v.csv, "
        "id_column: id, type: t}]}\nvertex_types: {t: {}}\noutput: {bundle: out}\n"
    )
    assert main(["check", str(spec), "--engine", "sparkle"]) == ExitCode.BAD_INPUT
    assert "unknown engine kind 'sparkle'" in capsys.readouterr().err
    assert main(["check", str(spec), "--memory-limit", "12 parsecs"]) == ExitCode.BAD_INPUT
    assert "not a memory size" in capsys.readouterr().err


def test_local_engine_spills_and_cleans_up_or_says_it_needs_more_memory(tmp_path: Path) -> None:
    rng = np.random.default_rng(7)
    table = pa.table({"id": pa.array(rng.integers(0, 10**9, 300_000)).cast(pa.string())})
    spill = tmp_path / "bundle.spill"
    expected = open_engine(EngineSpec(kind="reference")).canonical_order(table, ["id"])
    with open_engine(EngineSpec(memory_limit="16MB", threads=1, spill_folder=spill)) as engine:
        assert engine.canonical_order(table, ["id"]).tolist() == expected.tolist()
    assert not spill.exists()  # removed with the session that created it
    with (
        pytest.raises(SpecError, match="ran out of memory") as err,
        open_engine(EngineSpec(memory_limit="1MB", threads=1, spill_folder=spill)) as engine,
    ):
        engine.canonical_order(table, ["id"])
    assert err.value.key_path == "engine.memory_limit"
    assert not spill.exists()


def test_cli_engine_flags_give_the_same_bundle(tmp_path: Path) -> None:
    (tmp_path / "v.csv").write_text("id,age\na,1\nb,2\nc,3\n")
    (tmp_path / "e.csv").write_text("s,t\na,b\nb,a\na,x\na,b\n")
    manifests = []
    for flags in (["--engine", "local", "--threads", "1", "--memory-limit", "200MiB"],
                  ["--engine", "reference"]):  # fmt: skip
        out = tmp_path / flags[1]
        spec = tmp_path / flags[1] / "graph.yaml"  # the name comes from the file's stem
        spec.parent.mkdir()
        spec.write_text(
            "spec_version: 1\nsource: {kind: table-files, vertex_files: [{path: ../v.csv, "
            "id_column: id, type: t}], edge_files: [{path: ../e.csv, source_column: s, "
            "target_column: t, relation: r}]}\nvertex_types: {t: {properties: {age: "
            f"{{kind: integer}}}}}}}}\nrelations: [{{from: t, name: r, to: t}}]\n"
            f"output: {{bundle: {out / 'bundle'}}}\n"
        )
        assert main(["run", str(spec), "--even-if-failing", "--json", *flags]) == 1  # dangling
        manifests.append((out / "bundle" / "manifest.json").read_bytes())
        assert not (out / "bundle.spill").exists()
    assert manifests[0] == manifests[1]


def test_spark_settings_from_spec_and_flags(tmp_path: Path) -> None:
    spec = make_spec(
        tmp_path,
        engine={
            "kind": "spark",
            "cluster": "spark://head.example:7077",
            "cluster_settings": {"spark.executor.memory": "8g", "spark.speculation": True},
        },
    )
    assert spec.engine.cluster == "spark://head.example:7077"
    assert spec.engine.cluster_settings == {
        "spark.executor.memory": "8g",
        "spark.speculation": True,
    }
    with pytest.raises(SpecError, match="cluster"):
        make_spec(tmp_path, engine={"kind": "spark", "clusters": "local[2]"})
    with pytest.raises(SpecError, match=r"engine\.cluster"):
        make_spec(tmp_path, engine={"kind": "spark", "cluster_settings": {"executor": "1"}})


def test_cluster_urls_are_checked_and_never_shown_with_credentials() -> None:
    pytest.importorskip("pyspark")
    from graphmill.engine import check_settings
    from graphmill.engine.spark._session import _settings, cluster_of, redacted

    for url in ("local", "local[2]", "local[*]", "local[4,2]", "yarn", "spark://h:7077",
                "k8s://https://h:6443", "sc://h:15002/;token=t"):  # fmt: skip
        assert cluster_of(EngineSpec(kind="spark", cluster=url)) == url
    assert cluster_of(EngineSpec(kind="spark", threads=3)) == "local[3]"
    with pytest.raises(SpecError) as err:
        check_settings(EngineSpec(kind="spark", cluster="sc:/h;token=s3cret"))
    assert "s3cret" not in err.value.one_line() and "engine.cluster" in err.value.one_line()
    with pytest.raises(SpecError, match="for the spark engine"):
        check_settings(EngineSpec(kind="local", cluster="local[2]"))
    assert (
        redacted("sc://u:pw@h:15002/;user_id=u;token=abc")
        == "sc://***@h:15002/;user_id=u;token=***"
    )
    conf = _settings(
        EngineSpec(kind="spark", cluster="local[2]", memory_limit="1GiB", spill_folder=Path("/s"))
    )
    assert conf["spark.driver.bindAddress"] == "127.0.0.1" and conf["spark.ui.enabled"] == "false"
    assert (conf["spark.driver.memory"], conf["spark.local.dir"]) == ("1024m", "/s")
    # results come back whole by design: no cap of Spark's (1g) unless the spec sets one
    assert conf["spark.driver.maxResultSize"] == "0"
    capped = {"spark.driver.maxResultSize": "8g"}
    capped_conf = _settings(EngineSpec(kind="spark", cluster="yarn", cluster_settings=capped))
    assert capped_conf["spark.driver.maxResultSize"] == "8g"
    # a local driver runs every task: 4g unless engine.memory_limit says; a cluster's is its own
    assert _settings(EngineSpec(kind="spark", cluster="local[2]"))["spark.driver.memory"] == "4096m"
    assert "spark.driver.memory" not in capped_conf
    remote = _settings(EngineSpec(kind="spark", cluster="sc://h:15002"))
    assert "spark.driver.host" not in remote and "spark.local.dir" not in remote


def test_cli_cluster_flag(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    pytest.importorskip("pyspark")
    spec = tmp_path / "spec.yaml"
    spec.write_text(
        "spec_version: 1\nsource: {kind: table-files, vertex_files: [{path: ../v.csv, "
        "id_column: id, type: t}]}\nvertex_types: {t: {}}\noutput: {bundle: out}\n"
    )
    flags = ["--engine", "spark", "--cluster", "spark:/h;password=hunter2"]
    assert main(["check", str(spec), *flags]) == ExitCode.BAD_INPUT
    err = capsys.readouterr().err
    assert "not a Spark master" in err and "hunter2" not in err
    assert main(["check", str(spec), "--cluster", "local[2]"]) == ExitCode.BAD_INPUT
    assert "engine.cluster is for the spark engine" in capsys.readouterr().err
