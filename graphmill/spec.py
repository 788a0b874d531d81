"""The pipeline spec: YAML checked against ``schemas/spec.schema.json``, then cross-checked.

:func:`load_spec` returns a frozen :class:`PipelineSpec`. Every refusal is a
:class:`~graphmill.errors.SpecError` naming the file, the key path and what was expected.
"""

from __future__ import annotations

import builtins
import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, NamedTuple

from graphmill._output_paths import check_output_paths
from graphmill._shards import SHARD_EDGES
from graphmill._spec_checks import cross_check, refuse_nan
from graphmill._spec_explain import check_against_schema
from graphmill._spec_yaml import read_spec_document
from graphmill.errors import SpecError, quote_value

RESERVED_COLUMNS = ("vertex_id", "source_id", "target_id")


class RelationKey(NamedTuple):
    """A relation as (source type, relation name, target type)."""

    source_type: str
    name: str
    target_type: str

    @property
    def dotted(self) -> str:
        """``source.name.target``: the form used in file names, tensor keys and the spec."""
        return f"{self.source_type}.{self.name}.{self.target_type}"

    @classmethod
    def parse(cls, dotted: str) -> RelationKey:
        source, name, target = dotted.split(".")
        return cls(source, name, target)


@dataclass(frozen=True)
class PropertySpec:
    name: str
    source_key: str
    kind: str | None = None
    minimum: float | None = None
    maximum: float | None = None
    multi: bool = False
    date_format: str | None = None


@dataclass(frozen=True)
class VertexTypeSpec:
    name: str
    match: str
    properties: tuple[PropertySpec, ...] = ()

    def property(self, name: str) -> PropertySpec | None:
        return next((p for p in self.properties if p.name == name), None)


@dataclass(frozen=True)
class RelationSpec:
    key: RelationKey
    match: str
    undirected: bool = False
    properties: tuple[PropertySpec, ...] = ()


@dataclass(frozen=True)
class FeatureSpec:
    vertex_type: str
    property: str
    encoding: str
    max_categories: int = 1000
    datetime_parts: tuple[str, ...] = ("year", "month", "day_of_week")
    missing: str = "indicator"


@dataclass(frozen=True)
class LabelSpec:
    vertex_type: str
    property: str


@dataclass(frozen=True)
class TimeCut:
    """``task.by_time``: the timestamp property and where validation and test begin."""

    property: str
    of: str = "edge"
    validation_from: float | str = 0.8
    test_from: float | str = 0.9


@dataclass(frozen=True)
class LinkOptions:
    """The options of a ``links`` task."""

    relations: tuple[str, ...] = ()
    supervision_share: float | None = None
    per_positive: int = 1
    sampling: str = "uniform"
    negative_parts: tuple[str, ...] = ("validation", "test")
    by_time: TimeCut | None = None
    unseen_vertices: bool = False


@dataclass(frozen=True)
class TaskSpec:
    """``task``: what the dataset is for. Vertex kinds take their target from ``label``;
    edge kinds name a relation (dotted) and one of its properties."""

    kind: str = "vertex-classes"
    relation: str | None = None
    property: str | None = None
    links: LinkOptions | None = None

    @builtins.property
    def on_edges(self) -> bool:
        return self.kind.startswith("edge-")

    @builtins.property
    def numeric(self) -> bool:
        return self.kind.endswith("-values")


@dataclass(frozen=True)
class SplitSpec:
    method: str = "stratified"
    train: float = 0.7
    validation: float = 0.15
    test: float = 0.15
    seed: int = 0
    only_labeled: bool = True
    tolerance: float = 0.05


@dataclass(frozen=True)
class EdgePolicy:
    duplicates: str = "drop"
    self_loops: str = "keep"
    undirected: str = "symmetrize"
    add_reverse: bool = False


@dataclass(frozen=True)
class CheckSpec:
    severity: dict[str, str] = field(default_factory=dict)
    min_class_size: int = 5
    max_null_rate: float = 0.5
    max_unlabeled_rate: float = 0.9
    sample_size: int = 5
    expect: dict[str, Any] = field(default_factory=dict)
    label_copy_threshold: float = 0.99


@dataclass(frozen=True)
class RdfOptions:
    prefixes: dict[str, str] = field(default_factory=dict)
    several_types: str = "first-declared"
    languages: tuple[str, ...] | None = None
    graphs: str | tuple[str, ...] = "default"
    graph_property: str | None = None

    def expand(self, term: str) -> str:
        """Expand ``prefix:local`` with the declared prefixes; full IRIs (``<...>`` or with
        ``://``) pass through. Raises :class:`SpecError` for an undeclared prefix."""
        if term.startswith("<") and term.endswith(">"):
            return term[1:-1]
        prefix, sep, local = term.partition(":")
        if sep and prefix in self.prefixes:
            return self.prefixes[prefix] + local
        if "://" in term or term.startswith("urn:"):
            return term
        raise SpecError(
            f"{quote_value(term)} is not a full IRI and its prefix {quote_value(prefix)} is "
            "not declared",
            hint="declare it under rdf.prefixes or write the full IRI in <...>",
        )


@dataclass(frozen=True)
class GateRule:
    """One drift limit: a measured value above ``limit`` is a finding of ``severity``."""

    limit: float
    severity: str = "error"


@dataclass(frozen=True)
class DriftGateSpec:
    """``drift_gate``: the previous version to compare a build with, and the limits."""

    previous: Path | None = None
    rules: dict[str, GateRule] = field(default_factory=dict)


@dataclass(frozen=True)
class EngineSpec:
    """Which engine runs the heavy set work, and its resources (``None``: the engine's own)."""

    kind: str = "local"
    memory_limit: str | None = None  # e.g. "2GiB"
    spill_folder: Path | None = None  # default: "<bundle>.spill"
    threads: int | None = None
    cluster: str | None = None  # the spark engine's master or Spark Connect URL
    cluster_settings: dict[str, str] | None = None  # extra spark.* settings


@dataclass(frozen=True)
class OutputSpec:
    snapshot: Path
    bundle: Path
    report: Path
    junit: Path | None = None
    shard_edges: int = SHARD_EDGES  # more edges in all: the tensors are written sharded


@dataclass(frozen=True)
class PipelineSpec:
    """A validated spec. Paths are absolute, resolved against the spec file's folder."""

    name: str
    source_kind: str
    source: dict[str, Any]
    vertex_types: dict[str, VertexTypeSpec]
    relations: tuple[RelationSpec, ...]
    features: tuple[FeatureSpec, ...]
    label: LabelSpec | None
    split: SplitSpec
    edges: EdgePolicy
    checks: CheckSpec
    rdf: RdfOptions
    pseudonymize: bool
    pseudonym_key_env: str
    output: OutputSpec
    base_dir: Path
    spec_file: Path | None = None
    engine: EngineSpec = field(default_factory=EngineSpec)
    raw: dict[str, Any] = field(default_factory=dict, repr=False, compare=False)
    drift_gate: DriftGateSpec = field(default_factory=DriftGateSpec)
    task: TaskSpec | None = None

    def relation(self, key: RelationKey) -> RelationSpec:
        return next(r for r in self.relations if r.key == key)

    def resolve_path(self, path: str) -> Path:
        p = Path(path).expanduser()
        return p if p.is_absolute() else (self.base_dir / p)


def load_spec(path: str | Path) -> PipelineSpec:
    """Read, validate and cross-check a spec file (UTF-8, an optional byte-order mark).

    Raises :class:`SpecError` (exit 2) naming the file, and the line or key path, for a
    missing or unreadable file, bytes that are not UTF-8, YAML that does not parse, and
    every schema or cross-reference problem.
    """
    file = Path(path)
    document = read_spec_document(file)
    return spec_from_dict(document, base_dir=file.resolve().parent, spec_file=file)


def spec_from_dict(
    document: Any, *, base_dir: Path | None = None, spec_file: Path | None = None
) -> PipelineSpec:
    """Validate a spec given as a mapping (as parsed from YAML)."""
    where = str(spec_file) if spec_file else None
    refuse_nan(document, where)
    doc: dict[str, Any] = _yaml_words(document)
    check_against_schema(doc, where)
    base = (base_dir or Path.cwd()).resolve()
    rdf_doc = doc.get("rdf", {})
    graphs = rdf_doc.get("graphs", "default")
    rdf = RdfOptions(
        prefixes=dict(rdf_doc.get("prefixes", {})),
        several_types=rdf_doc.get("several_types", "first-declared"),
        languages=tuple(rdf_doc["languages"]) if "languages" in rdf_doc else None,
        graphs=graphs if isinstance(graphs, str) else tuple(graphs),
        graph_property=rdf_doc.get("graph_property"),
    )
    vertex_types = {
        name: VertexTypeSpec(
            name=name,
            match=(body or {}).get("match", name),
            properties=_properties((body or {}).get("properties", {})),
        )
        for name, body in doc["vertex_types"].items()
    }
    relations = tuple(
        RelationSpec(
            key=RelationKey(r["from"], r["name"], r["to"]),
            match=r.get("match", r["name"]),
            undirected=r.get("undirected", False),
            properties=_properties(r.get("properties", {})),
        )
        for r in doc.get("relations", [])
    )
    features = tuple(
        FeatureSpec(
            vertex_type=vt,
            property=f["property"],
            encoding=f["encoding"],
            max_categories=f.get("max_categories", 1000),
            datetime_parts=tuple(f.get("datetime_parts", ("year", "month", "day_of_week"))),
            missing=f.get("missing", "indicator"),
        )
        for vt, items in doc.get("features", {}).items()
        for f in items
    )
    label = LabelSpec(**doc["label"]) if "label" in doc else None
    split_doc = doc.get("split", {})
    fractions = split_doc.get("fractions", {"train": 0.7, "validation": 0.15, "test": 0.15})
    task = _task(doc)
    # Strata are classes: a numeric target or an edge task splits at random by default.
    classes = task is None or task.kind == "vertex-classes"
    split = SplitSpec(
        method=split_doc.get("method", "stratified" if classes else "random"),
        train=fractions["train"],
        validation=fractions.get("validation", 0.0),
        test=fractions.get("test", 0.0),
        seed=split_doc.get("seed", 0),
        only_labeled=split_doc.get("only_labeled", True),
        tolerance=split_doc.get("tolerance", 0.05),
    )
    out = doc["output"]
    bundle = _absolute(out["bundle"], base, "output.bundle", where)
    snapshot = (
        _absolute(out["snapshot"], base, "output.snapshot", where)
        if "snapshot" in out
        else Path(f"{bundle}.snapshot")
    )
    output = OutputSpec(
        snapshot=snapshot,
        bundle=bundle,
        report=_absolute(out["report"], base, "output.report", where)
        if "report" in out
        else Path(f"{snapshot}.report.json"),
        junit=_absolute(out["junit"], base, "output.junit", where) if "junit" in out else None,
        shard_edges=out.get("shard_edges", SHARD_EDGES),
    )
    engine_doc = doc.get("engine", {})
    engine = EngineSpec(
        kind=engine_doc.get("kind", "local"),
        memory_limit=engine_doc.get("memory_limit"),
        spill_folder=_absolute(engine_doc["spill_folder"], base, "engine.spill_folder", where)
        if "spill_folder" in engine_doc
        else None,
        threads=engine_doc.get("threads"),
        cluster=engine_doc.get("cluster"),
        cluster_settings=engine_doc.get("cluster_settings"),
    )
    checks_doc = doc.get("checks", {})
    spec = PipelineSpec(
        name=doc.get("name", (spec_file.stem if spec_file else "graph")),
        source_kind=doc["source"]["kind"],
        source=dict(doc["source"]),
        vertex_types=vertex_types,
        relations=relations,
        features=features,
        label=label,
        split=split,
        edges=EdgePolicy(**doc.get("edges", {})),
        checks=CheckSpec(
            severity=dict(checks_doc.get("severity", {})),
            min_class_size=checks_doc.get("min_class_size", 5),
            max_null_rate=checks_doc.get("max_null_rate", 0.5),
            max_unlabeled_rate=checks_doc.get("max_unlabeled_rate", 0.9),
            sample_size=checks_doc.get("sample_size", 5),
            expect=dict(checks_doc.get("expect", {})),
            label_copy_threshold=checks_doc.get("label_copy_threshold", 0.99),
        ),
        rdf=rdf,
        pseudonymize=doc.get("ids", {}).get("pseudonymize", False),
        pseudonym_key_env=doc.get("ids", {}).get("key_env", "GRAPHMILL_PSEUDONYM_KEY"),
        output=output,
        base_dir=base,
        spec_file=spec_file,
        engine=engine,
        raw=doc,
        drift_gate=parse_drift_gate(doc.get("drift_gate"), base, where),
        task=task,
    )
    cross_check(spec, where)
    check_output_paths(spec, where)
    return spec


def parse_drift_gate(
    doc: dict[str, Any] | None, base: Path, where: str | None = None
) -> DriftGateSpec:
    """The ``drift_gate`` section (already schema-checked); rule names are checked here, since
    the schema lists them only as a pattern."""
    if not doc:
        return DriftGateSpec()
    from graphmill.compare._gate import RULES

    rules = {}
    for name, body in doc.get("rules", {}).items():
        if name not in RULES:
            close = difflib.get_close_matches(name, list(RULES), n=1)
            guess = f"; did you mean {close[0]!r}?" if close else ""
            raise SpecError(
                f"unknown drift rule {name!r}{guess}",
                file=where,
                key_path=f"drift_gate.rules.{name}",
                hint=f"the rules are: {', '.join(sorted(RULES))}",
            )
        severity = body.get("severity", "error")
        rules[name] = GateRule(float(body["limit"]), "off" if severity is False else severity)
    previous = doc.get("previous")
    absolute = _absolute(previous, base, "drift_gate.previous", where) if previous else None
    return DriftGateSpec(absolute, rules)


def _task(doc: dict[str, Any]) -> TaskSpec | None:
    """The ``task`` section; without one, a label means vertex classes and no label no task."""
    body = doc.get("task")
    if body is None:
        return TaskSpec() if "label" in doc else None
    links = None
    if body["kind"] == "links":
        negatives = body.get("negatives", {})
        timing = body.get("by_time")
        links = LinkOptions(
            relations=tuple(body.get("relations", ())),
            supervision_share=body.get("supervision_share"),
            per_positive=negatives.get("per_positive", 1),
            sampling=negatives.get("sampling", "uniform"),
            negative_parts=tuple(negatives.get("parts", ("validation", "test"))),
            by_time=TimeCut(
                timing["property"],
                timing.get("of", "edge"),
                timing["validation_from"],
                timing["test_from"],
            )
            if timing
            else None,
            unseen_vertices=body.get("unseen_vertices", False),
        )
    return TaskSpec(body["kind"], body.get("relation"), body.get("property"), links)


def _absolute(path: str, base: Path, key: str, where: str | None) -> Path:
    try:
        p = Path(path).expanduser()
    except RuntimeError:  # ~name of a user this machine does not know
        raise SpecError(
            f"cannot expand {quote_value(path)}: {quote_value(path.split('/', 1)[0])} names no "
            "user on this machine",
            file=where,
            key_path=key,
            hint="write the path without ~user",
        ) from None
    return p if p.is_absolute() else base / p


def _properties(doc: dict[str, Any]) -> tuple[PropertySpec, ...]:
    return tuple(
        PropertySpec(
            name=name,
            source_key=(body or {}).get("from", name),
            kind=(body or {}).get("kind"),
            minimum=(body or {}).get("min"),
            maximum=(body or {}).get("max"),
            multi=(body or {}).get("multi", False),
            date_format=(body or {}).get("date_format"),
        )
        for name, body in doc.items()
    )


def _yaml_words(document: Any) -> Any:
    """``document`` with the YAML 1.1 booleans users write for words put back as words:
    a bare ``off`` under ``checks.severity`` reads as ``false`` and means ``off``."""
    checks = document.get("checks") if isinstance(document, dict) else None
    severity = checks.get("severity") if isinstance(checks, dict) else None
    if not isinstance(checks, dict) or not isinstance(severity, dict):
        return document
    if not any(v is False for v in severity.values()):
        return document
    fixed = {k: ("off" if v is False else v) for k, v in severity.items()}
    return {**document, "checks": {**checks, "severity": fixed}}
