"""The pipeline spec: YAML checked against ``schemas/spec.schema.json``, then cross-checked.

:func:`load_spec` returns a frozen :class:`PipelineSpec`. Every refusal is a
:class:`~graphmill.errors.SpecError` naming the file, the key path and what was expected.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, NamedTuple

import yaml

from graphmill._schemas import schema_validator
from graphmill.errors import SourceUnavailableError, SpecError

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
class SplitSpec:
    method: str = "stratified"
    train: float = 0.7
    validation: float = 0.15
    test: float = 0.15
    seed: int = 0
    only_labeled: bool = True


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
            f"{term!r} is not a full IRI and its prefix {prefix!r} is not declared",
            hint="declare it under rdf.prefixes or write the full IRI in <...>",
        )


@dataclass(frozen=True)
class EngineSpec:
    """Which engine runs the heavy set work, and its resources (``None``: the engine's own)."""

    kind: str = "local"
    memory_limit: str | None = None  # e.g. "2GiB"
    spill_folder: Path | None = None  # default: "<bundle>.spill"
    threads: int | None = None


@dataclass(frozen=True)
class OutputSpec:
    snapshot: Path
    bundle: Path
    report: Path
    junit: Path | None = None


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

    def relation(self, key: RelationKey) -> RelationSpec:
        return next(r for r in self.relations if r.key == key)

    def resolve_path(self, path: str) -> Path:
        p = Path(path).expanduser()
        return p if p.is_absolute() else (self.base_dir / p)


def load_spec(path: str | Path) -> PipelineSpec:
    """Read, validate and cross-check a spec file."""
    file = Path(path)
    try:
        text = file.read_text(encoding="utf-8")
    except FileNotFoundError as exc:
        raise SpecError("spec file not found", file=str(file), hint="check the path") from exc
    except (OSError, UnicodeDecodeError) as exc:
        raise SourceUnavailableError(f"cannot read the spec: {exc}", file=str(file)) from exc
    try:
        document = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        raise SpecError(
            f"not valid YAML: {getattr(exc, 'problem', exc)}",
            file=str(file),
            line=(mark.line + 1) if mark is not None else None,
        ) from exc
    return spec_from_dict(document, base_dir=file.resolve().parent, spec_file=file)


def spec_from_dict(
    document: Any, *, base_dir: Path | None = None, spec_file: Path | None = None
) -> PipelineSpec:
    """Validate a spec given as a mapping (as parsed from YAML)."""
    where = str(spec_file) if spec_file else None
    _check_against_schema(document, where)
    base = (base_dir or Path.cwd()).resolve()
    doc: dict[str, Any] = document
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
    split = SplitSpec(
        method=split_doc.get("method", "stratified"),
        train=fractions["train"],
        validation=fractions.get("validation", 0.0),
        test=fractions.get("test", 0.0),
        seed=split_doc.get("seed", 0),
        only_labeled=split_doc.get("only_labeled", True),
    )
    out = doc["output"]
    bundle = _absolute(out["bundle"], base)
    snapshot = _absolute(out["snapshot"], base) if "snapshot" in out else Path(f"{bundle}.snapshot")
    output = OutputSpec(
        snapshot=snapshot,
        bundle=bundle,
        report=_absolute(out["report"], base)
        if "report" in out
        else Path(f"{snapshot}.report.json"),
        junit=_absolute(out["junit"], base) if "junit" in out else None,
    )
    engine_doc = doc.get("engine", {})
    engine = EngineSpec(
        kind=engine_doc.get("kind", "local"),
        memory_limit=engine_doc.get("memory_limit"),
        spill_folder=_absolute(engine_doc["spill_folder"], base)
        if "spill_folder" in engine_doc
        else None,
        threads=engine_doc.get("threads"),
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
        ),
        rdf=rdf,
        pseudonymize=doc.get("ids", {}).get("pseudonymize", False),
        pseudonym_key_env=doc.get("ids", {}).get("key_env", "GRAPHMILL_PSEUDONYM_KEY"),
        output=output,
        base_dir=base,
        spec_file=spec_file,
        engine=engine,
        raw=doc,
    )
    _cross_check(spec, where)
    return spec


def _absolute(path: str, base: Path) -> Path:
    p = Path(path).expanduser()
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
        )
        for name, body in doc.items()
    )


def _key_path(parts: Any) -> str:
    out = ""
    for part in parts:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out or "(top level)"


def _check_against_schema(document: Any, where: str | None) -> None:
    if not isinstance(document, dict):
        raise SpecError("the spec must be a YAML mapping at the top level", file=where)
    validator = schema_validator("spec")
    errors = sorted(validator.iter_errors(document), key=lambda e: (len(e.path), list(e.path)))
    if not errors:
        return
    error = _most_useful(errors)
    raise SpecError(_explain(error), file=where, key_path=_key_path(error.absolute_path))


def _most_useful(errors: list[Any]) -> Any:
    """Prefer an unknown-key error, then the deepest error; descend into oneOf/allOf context."""
    for err in errors:
        if err.validator in ("additionalProperties", "unevaluatedProperties"):
            return err
    deepest = max(errors, key=lambda e: len(e.absolute_path))
    while deepest.context:
        deepest = max(deepest.context, key=lambda e: len(e.absolute_path))
    return deepest


def _explain(error: Any) -> str:
    if error.validator in ("additionalProperties", "unevaluatedProperties"):
        allowed = sorted(error.schema.get("properties", {}))
        extra = [k for k in error.instance if k not in allowed]
        bad = extra[0] if extra else "?"
        close = difflib.get_close_matches(bad, allowed, n=1)
        guess = f"; did you mean {close[0]!r}?" if close else ""
        return f"unknown key {bad!r}{guess} (expected one of: {', '.join(allowed)})"
    if error.validator == "required":
        return f"missing required key: {error.message.split(' ')[0]}"
    if error.validator == "enum":
        return f"{error.instance!r} is not one of {', '.join(map(repr, error.validator_value))}"
    if error.validator == "pattern":
        expected = error.schema.get("description", error.validator_value)
        return f"{error.instance!r} does not have the expected form ({expected})"
    return error.message


def _cross_check(spec: PipelineSpec, where: str | None) -> None:
    def fail(message: str, key_path: str) -> None:
        raise SpecError(message, file=where, key_path=key_path)

    types = spec.vertex_types
    seen: set[RelationKey] = set()
    for i, rel in enumerate(spec.relations):
        for side, name in (("from", rel.key.source_type), ("to", rel.key.target_type)):
            if name not in types:
                fail(
                    f"relation refers to undeclared vertex type {name!r}", f"relations[{i}].{side}"
                )
        if rel.key in seen:
            fail(f"relation {rel.key.dotted} is declared twice", f"relations[{i}]")
        seen.add(rel.key)
    for vt_name in spec.raw.get("features", {}):
        if vt_name not in types:
            fail(f"features for undeclared vertex type {vt_name!r}", f"features.{vt_name}")
    for i, feat in enumerate(spec.features):
        if types[feat.vertex_type].property(feat.property) is None:
            fail(
                f"feature uses property {feat.property!r}, which vertex type "
                f"{feat.vertex_type!r} does not declare",
                f"features.{feat.vertex_type}[{i}].property",
            )
    if spec.label is not None:
        if spec.label.vertex_type not in types:
            fail(f"label on undeclared vertex type {spec.label.vertex_type!r}", "label.vertex_type")
        if types[spec.label.vertex_type].property(spec.label.property) is None:
            fail(f"label property {spec.label.property!r} is not declared", "label.property")
    total = spec.split.train + spec.split.validation + spec.split.test
    if abs(total - 1.0) > 1e-9:
        fail(f"split fractions add up to {total:g}, not 1", "split.fractions")
    if spec.split.method == "stratified" and spec.label is None and "split" in spec.raw:
        fail("a stratified split needs a label", "split.method")
    if spec.source_kind in ("rdf-file", "rdf-store"):
        try:
            for vt in types.values():
                spec.rdf.expand(vt.match)
                for prop in vt.properties:
                    spec.rdf.expand(prop.source_key)
            for rel in spec.relations:
                spec.rdf.expand(rel.match)
        except SpecError as exc:
            fail(exc.message, "rdf.prefixes")
