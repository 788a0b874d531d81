"""Bad specs, generated family by family: every enum value misspelt, every required key missing,
every cross-reference wrong, every min/max pair inverted, every bad delimiter, a wrong type for
every key, non-UTF-8 and byte-order-marked files, huge values, NaN, YAML syntax errors.

Each case changes one thing in a good project and expects exit 2 from the command (pull, check,
build or run, in turn: the spec is checked at load for all of them), a message that names the
spec file and the key path (or the line), and nothing written. An unquoted ``off`` under
``checks.severity`` must load, so it is a test in ``tests/test_spec.py``, not a case here.
"""

from __future__ import annotations

import copy
from typing import Any

import yaml

from tests.bad_inputs._corpus import Case, spec_argv, table_project

COMMANDS = ("pull", "check", "build", "run")
SPEC = "{dir}/spec.yaml"

TABLE: dict[str, Any] = {
    "spec_version": 1,
    "name": "people",
    "source": {
        "kind": "table-files",
        "vertex_files": [{"path": "people.csv", "id_column": "ref", "type": "person"}],
        "edge_files": [
            {"path": "knows.csv", "source_column": "a", "target_column": "b", "relation": "knows"}
        ],
    },
    "vertex_types": {
        "person": {"properties": {"age": {"kind": "integer"}, "team": {"kind": "string"}}}
    },
    "relations": [{"from": "person", "name": "knows", "to": "person"}],
    "features": {"person": [{"property": "age", "encoding": "standardize"}]},
    "label": {"vertex_type": "person", "property": "team"},
    "split": {"method": "random", "fractions": {"train": 0.5, "validation": 0.25, "test": 0.25}},
    "output": {"bundle": "out/bundle"},
}
RDF: dict[str, Any] = {
    "spec_version": 1,
    "source": {"kind": "rdf-file", "paths": ["g.nt"]},
    "rdf": {"prefixes": {"ex": "http://example.org/"}},
    "vertex_types": {"person": {"match": "ex:Person", "properties": {"age": {"from": "ex:age"}}}},
    "relations": [{"from": "person", "name": "knows", "to": "person", "match": "ex:knows"}],
    "output": {"bundle": "out/bundle"},
}
GREMLIN = {**RDF, "source": {"kind": "gremlin", "url": "ws://127.0.0.1:9/gremlin"}}
GREMLIN.pop("rdf")
SPARQL = {**RDF, "source": {"kind": "sparql-endpoint", "query_url": "http://127.0.0.1:9/q"}}
GRAPH_NT = (
    "<http://example.org/p1> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> "
    "<http://example.org/Person> .\n"
)

CASES: list[Case] = []


def _edit(base: dict[str, Any], dotted: str, value: Any = None, *, delete: bool = False) -> Any:
    """A copy of ``base`` with the key at ``dotted`` (``a.b.0.c``) set or deleted."""
    doc = copy.deepcopy(base)
    node: Any = doc
    *parents, last = dotted.split(".")
    for key in parents:
        node = node[int(key)] if key.isdigit() else node.setdefault(key, {})
    index: Any = int(last) if last.isdigit() else last
    if delete:
        del node[index]
    elif isinstance(node, list) and index == len(node):
        node.append(value)
    else:
        node[index] = value
    return doc


def add(name: str, spec: Any, where: str | None, says: str, base: Any = None) -> None:
    """One case: ``spec`` (a mapping to dump, or text/bytes as is) must be refused."""
    if isinstance(spec, dict | list):
        text: str | bytes = yaml.safe_dump(spec, sort_keys=False, allow_unicode=True)
    else:
        text = spec
    files = table_project(text, {"g.nt": GRAPH_NT} if base is not TABLE else None)
    command = COMMANDS[len(CASES) % len(COMMANDS)]
    place = SPEC if where is None else (where if where.startswith(SPEC) else f"{SPEC}, {where}")
    CASES.append(
        Case(
            name=f"spec-{name}",
            category="spec",
            files=files,
            argv=spec_argv(command),
            exit_code=2,
            where=place,
            says=says,
        )
    )


def misspelt(word: str) -> str:
    """The word with its middle letter doubled: close enough for a did-you-mean."""
    middle = len(word) // 2
    return word[:middle] + word[middle] + word[middle:]


# --- every enum value misspelt: a did-you-mean back to it -------------------------------------

ENUMS: list[tuple[dict[str, Any], str, tuple[str, ...]]] = [
    (TABLE, "edges.duplicates", ("keep", "drop", "merge")),
    (TABLE, "edges.self_loops", ("keep", "drop")),
    (TABLE, "edges.undirected", ("symmetrize", "as-is")),
    (TABLE, "split.method", ("random", "stratified")),
    (
        TABLE,
        "features.person.0.encoding",
        (
            "standardize",
            "min-max",
            "log",
            "categories",
            "one-hot",
            "boolean",
            "multi-hot",
            "datetime",
            "identity",
        ),
    ),
    (TABLE, "features.person.0.missing", ("indicator", "fill")),
    (
        TABLE,
        "vertex_types.person.properties.age.kind",
        (
            "integer",
            "float",
            "boolean",
            "string",
            "datetime",
            "date",
        ),
    ),
    (TABLE, "source.vertex_files.0.format", ("csv", "parquet")),
    (TABLE, "checks.severity.self-loop", ("error", "warning", "info", "off")),
    (RDF, "rdf.several_types", ("first-declared", "every-type", "reject")),
    (RDF, "rdf.graphs", ("default", "union")),
    (RDF, "source.format", ("n-triples", "n-quads", "turtle", "trig", "rdf-xml")),
    (GREMLIN, "source.meta_properties", ("drop", "keep")),
    (SPARQL, "source.paging", ("auto", "offset", "key-range", "single-stream")),
    (SPARQL, "source.results_format", ("auto", "tsv", "json", "csv")),
    (SPARQL, "source.method", ("auto", "get", "post")),
]
for base, dotted, values in ENUMS:
    shown = dotted.replace(".person.0.", ".person[0].").replace(".0.", "[0].")
    for value in values:
        add(
            f"enum-{dotted}-{value}",
            _edit(base, dotted, misspelt(value)),
            shown,
            f"did you mean {value!r}?",
            base,
        )
for part in ("year", "month", "day", "day_of_week", "hour", "epoch_days"):
    feature = {"property": "born", "encoding": "datetime", "datetime_parts": [misspelt(part)]}
    doc = _edit(TABLE, "vertex_types.person.properties.born", {"kind": "datetime"})
    add(
        f"enum-datetime_parts-{part}",
        _edit(doc, "features.person.0", feature),
        "features.person[0].datetime_parts[0]",
        f"did you mean {part!r}?",
        TABLE,
    )
add(
    "source-kind-misspelt",
    _edit(TABLE, "source.kind", "table-file"),
    "source.kind",
    "did you mean 'table-files'?",
    TABLE,
)
add(
    "source-kind-unknown",
    _edit(RDF, "source.kind", "graphml"),
    "source.kind",
    "unknown source kind 'graphml'",
    RDF,
)

# --- every required key missing ---------------------------------------------------------------

REQUIRED = [
    (TABLE, "spec_version"),
    (TABLE, "source"),
    (TABLE, "vertex_types"),
    (TABLE, "output"),
    (TABLE, "source.kind"),
    (TABLE, "output.bundle"),
    (TABLE, "source.vertex_files"),
    (TABLE, "source.vertex_files.0.path"),
    (TABLE, "source.vertex_files.0.id_column"),
    (TABLE, "source.edge_files.0.path"),
    (TABLE, "source.edge_files.0.source_column"),
    (TABLE, "source.edge_files.0.target_column"),
    (TABLE, "relations.0.from"),
    (TABLE, "relations.0.name"),
    (TABLE, "relations.0.to"),
    (TABLE, "features.person.0.property"),
    (TABLE, "features.person.0.encoding"),
    (TABLE, "label.vertex_type"),
    (TABLE, "label.property"),
    (TABLE, "split.fractions.train"),
    (RDF, "source.paths"),
    (GREMLIN, "source.url"),
    (SPARQL, "source.query_url"),
]
for base, dotted in REQUIRED:
    shown = dotted.replace(".person.0.", ".person[0].").replace(".0.", "[0].")
    if shown.startswith("relations.0."):
        shown = shown.replace("relations.0.", "relations[0].")
    leaf = dotted.rsplit(".", 1)[-1]
    add(
        f"required-{dotted}",
        _edit(base, dotted, delete=True),
        shown,
        f"missing required key {leaf!r}",
        base,
    )
for key, base in (("type", TABLE), ("relation", TABLE)):
    files = "vertex_files" if key == "type" else "edge_files"
    add(
        f"required-one-of-{key}",
        _edit(base, f"source.{files}.0.{key}", delete=True),
        f"source.{files}[0]",
        "give exactly one of",
        base,
    )
    both = _edit(base, f"source.{files}.0.{key}_column", "kind")
    add(f"both-of-{key}", both, f"source.{files}[0]", "both are given", base)

# --- every cross-reference wrong: named at its key, with a did-you-mean -----------------------

CROSS = [
    ("vertex-file-type", "source.vertex_files.0.type", "persn", "source.vertex_files[0].type"),
    ("edge-file-relation", "source.edge_files.0.relation", "knws", "source.edge_files[0].relation"),
    ("relation-from", "relations.0.from", "persn", "relations[0].from"),
    ("relation-to", "relations.0.to", "persn", "relations[0].to"),
    ("feature-property", "features.person.0.property", "aeg", "features.person[0].property"),
    ("label-vertex-type", "label.vertex_type", "persn", "label.vertex_type"),
    ("label-property", "label.property", "taem", "label.property"),
]
for name, dotted, value, shown in CROSS:
    add(f"xref-{name}", _edit(TABLE, dotted, value), shown, "did you mean", TABLE)
add(
    "xref-features-vertex-type",
    _edit(TABLE, "features", {"persn": TABLE["features"]["person"]}),
    "features.persn",
    "did you mean 'person'?",
    TABLE,
)
add(
    "xref-second-feature-index",
    _edit(TABLE, "features.person.1", {"property": "tem", "encoding": "one-hot"}),
    "features.person[1].property",
    "did you mean 'team'?",
    TABLE,
)
add(
    "xref-severity-rule",
    _edit(TABLE, "checks.severity", {"self-lop": "error"}),
    "checks.severity.self-lop",
    "did you mean 'self-loop'?",
    TABLE,
)
add(
    "xref-severity-rule-far",
    _edit(TABLE, "checks.severity", {"zzz": "error"}),
    "checks.severity.zzz",
    "rule ids (all in the README",
    TABLE,
)
add(
    "xref-expect-vertex-type",
    _edit(TABLE, "checks.expect.vertex_types", {"persn": {}}),
    "checks.expect.vertex_types.persn",
    "did you mean 'person'?",
    TABLE,
)
add(
    "xref-expect-relation",
    _edit(TABLE, "checks.expect.relations", {"person.knws.person": {}}),
    "checks.expect.relations.person.knws.person",
    "did you mean 'person.knows.person'?",
    TABLE,
)
add(
    "xref-expect-property-type",
    _edit(TABLE, "checks.expect.properties", {"persn": ["age"]}),
    "checks.expect.properties.persn",
    "did you mean 'person'?",
    TABLE,
)
add(
    "xref-expect-property",
    _edit(TABLE, "checks.expect.properties", {"person": ["age", "tem"]}),
    "checks.expect.properties.person[1]",
    "did you mean 'team'?",
    TABLE,
)
add(
    "xref-leakage",
    _edit(TABLE, "features.person.1", {"property": "team", "encoding": "one-hot"}),
    "features.person[1].property",
    "target leakage",
    TABLE,
)
add(
    "xref-duplicate-relation",
    _edit(TABLE, "relations.1", TABLE["relations"][0]),
    "relations[1]",
    "declared twice",
    TABLE,
)
add(
    "xref-add-reverse-clash",
    _edit(
        _edit(TABLE, "relations.1", {"from": "person", "name": "rev_knows", "to": "person"}),
        "edges.add_reverse",
        True,
    ),
    "edges.add_reverse",
    "would add person.rev_knows.person",
    TABLE,
)
add(
    "xref-stratified-without-label",
    _edit(_edit(TABLE, "label", None, delete=True), "split.method", "stratified"),
    "split.method",
    "needs a label",
    TABLE,
)
add(
    "xref-fractions-sum",
    _edit(TABLE, "split.fractions.test", 0.5),
    "split.fractions",
    "add up to 1.25",
    TABLE,
)
add(
    "xref-rdf-prefix",
    _edit(RDF, "vertex_types.person.match", "zz:Person"),
    "vertex_types.person.match",
    "prefix 'zz' is not declared",
    RDF,
)
add(
    "xref-rdf-graph-property",
    _edit(RDF, "rdf.graph_property", "age"),
    "rdf.graph_property",
    "also a property",
    RDF,
)
add(
    "xref-rdf-edge-properties",
    _edit(RDF, "relations.0.properties", {"since": None}),
    "relations[0].properties",
    "no edge properties",
    RDF,
)

# --- an encoding or option that cannot apply to the property ----------------------------------

ENCODING_MISFITS = [
    ("log-on-string", "string", "log"),
    ("standardize-on-date", "date", "standardize"),
    ("min-max-on-datetime", "datetime", "min-max"),
    ("identity-on-string", "string", "identity"),
    ("datetime-on-integer", "integer", "datetime"),
    ("datetime-on-float", "float", "datetime"),
    ("datetime-on-boolean", "boolean", "datetime"),
    ("boolean-on-string", "string", "boolean"),
    ("boolean-on-date", "date", "boolean"),
]
for name, kind, encoding in ENCODING_MISFITS:
    doc = _edit(TABLE, "vertex_types.person.properties.x", {"kind": kind})
    doc = _edit(doc, "features.person.0", {"property": "x", "encoding": encoding})
    add(f"encoding-{name}", doc, "features.person[0].encoding", "cannot apply to 'x'", TABLE)
multi = _edit(TABLE, "vertex_types.person.properties.tags", {"kind": "string", "multi": True})
for encoding in ("categories", "one-hot", "standardize"):
    doc = _edit(multi, "features.person.0", {"property": "tags", "encoding": encoding})
    add(f"encoding-{encoding}-on-multi", doc, "features.person[0].encoding", "multi-hot", TABLE)
for key, value in (("datetime_parts", ["year"]), ("max_categories", 3)):
    doc = _edit(TABLE, f"features.person.0.{key}", value)
    add(f"option-{key}-with-standardize", doc, f"features.person[0].{key}", "has no effect", TABLE)
add(
    "encoding-twice",
    _edit(TABLE, "features.person.1", TABLE["features"]["person"][0]),
    "features.person[1]",
    "encoded as 'standardize' twice",
    TABLE,
)

# --- every min/max pair inverted, and bounds on what is not a number ---------------------------

add(
    "range-vertex-property",
    _edit(TABLE, "vertex_types.person.properties.age", {"kind": "integer", "min": 120, "max": 0}),
    "vertex_types.person.properties.age.min",
    "min 120 is above max 0",
    TABLE,
)
add(
    "range-edge-property",
    _edit(TABLE, "relations.0.properties", {"since": {"min": 2030, "max": 1990}}),
    "relations[0].properties.since.min",
    "min 2030 is above max 1990",
    TABLE,
)
add(
    "range-contract-vertex-type",
    _edit(TABLE, "checks.expect.vertex_types", {"person": {"min": 10, "max": 1}}),
    "checks.expect.vertex_types.person.min",
    "min 10 is above max 1",
    TABLE,
)
add(
    "range-contract-relation",
    _edit(TABLE, "checks.expect.relations", {"person.knows.person": {"min": 7, "max": 2}}),
    "checks.expect.relations.person.knows.person.min",
    "min 7 is above max 2",
    TABLE,
)
add(
    "range-on-string",
    _edit(TABLE, "vertex_types.person.properties.team", {"kind": "string", "min": 1}),
    "vertex_types.person.properties.team.min",
    "apply to numbers",
    TABLE,
)

# --- every bad delimiter, in a vertex file and an edge file ------------------------------------

for files in ("vertex_files", "edge_files"):
    for label, value, says in (
        ("newline", "\n", "not a newline"),
        ("carriage-return", "\r", "carriage return"),
        ("quote", '"', "quote character"),
        ("two-characters", ";;", "longer than 1 character"),
        ("empty", "", "empty"),
    ):
        add(
            f"delimiter-{files}-{label}",
            _edit(TABLE, f"source.{files}.0.delimiter", value),
            f"source.{files}[0].delimiter",
            says,
            TABLE,
        )

# --- a wrong type for every key ----------------------------------------------------------------

WRONG_TYPES: list[tuple[dict[str, Any], str, Any, str]] = [
    (TABLE, "spec_version", "1", "is not 1"),
    (TABLE, "name", 5, "is not a string"),
    (TABLE, "source", "tables", "is not a mapping"),
    (TABLE, "vertex_types", ["person"], "is not a mapping"),
    (TABLE, "vertex_types.person", "x", "is not a mapping"),
    (TABLE, "vertex_types.person.properties", ["age"], "is not a mapping"),
    (TABLE, "vertex_types.person.properties.age", 5, "is not a mapping or empty"),
    (TABLE, "vertex_types.person.properties.age.from", 5, "is not a string"),
    (TABLE, "vertex_types.person.properties.age.min", "zero", "is not a number"),
    (TABLE, "vertex_types.person.properties.age.multi", "many", "is not true or false"),
    (TABLE, "vertex_types.person.match", [], "is not a string"),
    (TABLE, "relations", {"knows": {}}, "is not a list"),
    (TABLE, "relations.0", "knows", "is not a mapping"),
    (TABLE, "relations.0.undirected", "both", "is not true or false"),
    (TABLE, "features", [], "is not a mapping"),
    (TABLE, "features.person", {"property": "age"}, "is not a list"),
    (TABLE, "features.person.0.max_categories", 2.5, "is not an integer"),
    (TABLE, "features.person.0.datetime_parts", "year", "is not a list"),
    (TABLE, "label", "team", "is not a mapping"),
    (TABLE, "split", 0.7, "is not a mapping"),
    (TABLE, "split.fractions", [0.5, 0.5], "is not a mapping"),
    (TABLE, "split.fractions.train", "most", "is not a number"),
    (TABLE, "split.seed", -1, "must be at least 0"),
    (TABLE, "split.only_labeled", "some", "is not true or false"),
    (TABLE, "edges", "drop", "is not a mapping"),
    (TABLE, "edges.add_reverse", 1, "is not true or false"),
    (TABLE, "checks", ["x"], "is not a mapping"),
    (TABLE, "checks.min_class_size", 0, "must be at least 1"),
    (TABLE, "checks.max_null_rate", 1.5, "must be at most 1"),
    (TABLE, "checks.max_unlabeled_rate", "half", "is not a number"),
    (TABLE, "checks.sample_size", 5000, "must be at most 1000"),
    (TABLE, "checks.expect", [], "is not a mapping"),
    (TABLE, "checks.expect.vertex_types", {"person": {"min": -1}}, "must be at least 0"),
    (TABLE, "ids", True, "is not a mapping"),
    (TABLE, "ids.pseudonymize", "yes please", "is not true or false"),
    (TABLE, "ids.key_env", "MY KEY", "does not have the expected form"),
    (TABLE, "output", "out", "is not a mapping"),
    (TABLE, "output.bundle", 5, "is not a string"),
    (TABLE, "output.snapshot", "", "empty"),
    (TABLE, "output.junit", [], "is not a string"),
    (TABLE, "source.vertex_files", {"path": "people.csv"}, "is not a list"),
    (TABLE, "source.vertex_files.0.id_column", 3, "is not a string"),
    (TABLE, "source.vertex_files.0.path", None, "is not a string"),
    (TABLE, "source.edge_files.0.source_column", ["a"], "is not a string"),
    (RDF, "source.paths", "g.nt", "is not a list"),
    (RDF, "rdf.prefixes", ["ex"], "is not a mapping"),
    (RDF, "rdf.languages", "en", "is not a list"),
    (GREMLIN, "source.page_size", 0, "must be at least 1"),
    (GREMLIN, "source.partitions", 65, "must be at most 64"),
    (GREMLIN, "source.url", "http://127.0.0.1/gremlin", "does not have the expected form"),
    (GREMLIN, "source.tls", "on", "is not a mapping"),
    (GREMLIN, "source.retries.attempts", 0, "must be at least 1"),
    (SPARQL, "source.request_timeout_s", 0, "must be above 0"),
    (SPARQL, "source.username_env", "1USER", "does not have the expected form"),
]
for base, dotted, value, says in WRONG_TYPES:
    shown = dotted
    for number in ("0",):
        shown = shown.replace(f".{number}.", f"[{number}].")
        shown = shown[: -len(number) - 1] + f"[{number}]" if shown.endswith(f".{number}") else shown
    add(f"type-{dotted}", _edit(base, dotted, value), shown, says, base)

# --- NaN (YAML .nan) where a number is expected ------------------------------------------------

for dotted in (
    "split.fractions.train",
    "split.fractions.test",
    "vertex_types.person.properties.age.min",
    "checks.max_null_rate",
):
    add(f"nan-{dotted}", _edit(TABLE, dotted, float("nan")), dotted, "NaN", TABLE)
add(
    "nan-retries",
    _edit(GREMLIN, "source.retries.initial_wait_s", float("nan")),
    "source.retries.initial_wait_s",
    "NaN",
    GREMLIN,
)

# --- words YAML 1.1 reads as booleans ----------------------------------------------------------

GOOD_TEXT = yaml.safe_dump(TABLE, sort_keys=False)
for key, word in (("self_loops", "no"), ("duplicates", "off"), ("undirected", "yes")):
    add(
        f"yaml-boolean-{key}",
        GOOD_TEXT + f"edges: {{{key}: {word}}}\n",
        f"edges.{key}",
        "YAML reads a bare",
        TABLE,
    )
add(
    "yaml-boolean-severity-on",
    GOOD_TEXT + "checks: {severity: {self-loop: on}}\n",
    "checks.severity.self-loop",
    "YAML reads a bare",
    TABLE,
)
add(
    "yaml-boolean-vertex-type-name",
    GOOD_TEXT.replace("  person:\n", "  yes:\n", 1),
    "vertex_types",
    "YAML reads a bare",
    TABLE,
)

# --- YAML that does not parse: the line --------------------------------------------------------

SYNTAX = [
    ("unclosed-bracket", "spec_version: 1\nsource: {kind: table-files\nvertex_types: {}\n", 3),
    ("unclosed-quote", 'spec_version: 1\nname: "people\noutput: {bundle: b}\n', 4),
    ("tab-indent", "spec_version: 1\nsource:\n\tkind: table-files\n", 3),
    ("bad-indent", "spec_version: 1\nsource:\n  kind: table-files\n    paths: []\n", 4),
    ("two-colons", "spec_version: 1\nname: a: b\n", 2),
    ("stray-dash", "spec_version: 1\n- name\n", 2),
    ("undefined-alias", "spec_version: 1\nname: *missing\n", 2),
]
for name, text, line in SYNTAX:
    add(f"yaml-{name}", text, f"{SPEC}:{line}", "not valid YAML", TABLE)
add(
    "yaml-too-deep",
    "spec_version: 1\nname: " + "[" * 3000 + "]" * 3000 + "\n",
    None,
    "nested too deeply",
    TABLE,
)

# --- the shape of the file itself --------------------------------------------------------------

add("top-level-list", "- spec_version: 1\n", None, "must be a YAML mapping", TABLE)
add("top-level-scalar", "people\n", None, "must be a YAML mapping", TABLE)
add("empty-file", "", None, "must be a YAML mapping", TABLE)
add(
    "not-utf8-latin1",
    GOOD_TEXT.replace("name: people", "name: caf\xe9").encode("latin-1"),
    f"{SPEC}:2",
    "not UTF-8 text",
    TABLE,
)
add("not-utf8-utf16", GOOD_TEXT.encode("utf-16"), f"{SPEC}:1", "UTF-16 byte-order mark", TABLE)
add("not-utf8-binary", b"\xff\xfe\x00\x01" * 64, f"{SPEC}:1", "not UTF-8 text", TABLE)
add(
    "bom-then-key-typo",
    b"\xef\xbb\xbf" + GOOD_TEXT.replace("spec_version", "spec_vesion").encode(),
    "spec_vesion",
    "unknown key 'spec_vesion'; did you mean 'spec_version'?",
    TABLE,
)
add(
    "bom-then-bad-utf8",
    b"\xef\xbb\xbfspec_version: 1\nname: \xc3\x28\n",
    f"{SPEC}:2",
    "byte 25",
    TABLE,
)

# --- huge values: the message stays short ------------------------------------------------------

HUGE = "q" * 5_000_000
add(
    "huge-name",
    GOOD_TEXT.replace("name: people", f"name: {HUGE}"),
    "name",
    "does not have the expected form",
    TABLE,
)
add("huge-enum-value", _edit(TABLE, "edges.duplicates", HUGE), "edges.duplicates", "…", TABLE)
add("huge-source-kind", _edit(TABLE, "source.kind", HUGE), "source.kind", "…", TABLE)
add("huge-unknown-key", _edit(TABLE, HUGE, 1), "(top level)", "unknown key", TABLE)
add("huge-vertex-type-name", _edit(TABLE, f"vertex_types.{HUGE}", {}), "vertex_types", "…", TABLE)

# --- a key given twice (YAML alone would keep the last one silently) ---------------------------

add(
    "duplicate-top-level-key",
    GOOD_TEXT + "output: {bundle: elsewhere}\n",
    f"{SPEC}:{GOOD_TEXT.count(chr(10)) + 1}",
    "the key 'output' is given twice",
    TABLE,
)
add(
    "duplicate-nested-key",
    GOOD_TEXT.replace("  method: random\n", "  method: random\n  method: stratified\n"),
    SPEC,
    "the key 'method' is given twice",
    TABLE,
)
LAUGHS = ["a0: &a0 [x, x, x, x, x, x, x, x, x, x]"] + [
    f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]" for i in range(1, 9)
]
add("yaml-alias-expansion", "\n".join(LAUGHS) + "\n", f"{SPEC}:1", "expands to more than", TABLE)
for key in ("bundle", "snapshot", "report", "junit"):
    add(
        f"output-{key}-unknown-user",
        _edit(TABLE, f"output.{key}", "~no_such_user_gm/x"),
        f"output.{key}",
        "names no user",
        TABLE,
    )

# --- rows told apart by a column, but two declared things share the value ----------------------

BY_COLUMN = _edit(
    TABLE,
    "source.vertex_files.0",
    {"path": "people.csv", "id_column": "ref", "type_column": "team"},
)
add(
    "type-column-shared-match",
    _edit(BY_COLUMN, "vertex_types.robot", {"match": "person"}),
    "vertex_types.robot.match",
    "cannot tell their rows apart",
    TABLE,
)
add(
    "relation-column-shared-match",
    _edit(
        _edit(
            TABLE,
            "source.edge_files.0",
            {
                "path": "knows.csv",
                "source_column": "a",
                "target_column": "b",
                "relation_column": "a",
            },
        ),
        "relations.1",
        {"from": "person", "name": "likes", "to": "person", "match": "knows"},
    ),
    "relations[1].match",
    "cannot tell their rows apart",
    TABLE,
)
add(
    "huge-rule-id",
    _edit(TABLE, "checks.severity", {"z" * 1_000_000: "error"}),
    "checks.severity.zzzz",
    "unknown rule id",
    TABLE,
)
add(
    "huge-contract-relation",
    _edit(TABLE, "checks.expect.relations", {f"person.{'k' * 1_000_000}.person": {}}),
    "checks.expect.relations.person.kkk",
    "undeclared relation",
    TABLE,
)
