"""Cases that already held before the corpus existed: a typo in a key, a missing column."""

from __future__ import annotations

from tests.bad_inputs._corpus import Case, spec_argv, table_project, table_spec

CASES = [
    Case(
        name="smoke-spec-key-typo",
        category="spec",
        files=table_project(table_spec().replace("relations:", "relatoins:")),
        argv=spec_argv("pull"),
        exit_code=2,
        where="{dir}/spec.yaml",
        says="'relations'",
    ),
    Case(
        name="smoke-csv-missing-column",
        category="tables",
        files=table_project(files={"knows.csv": "a,c\np1,p2\n"}),
        argv=spec_argv("pull"),
        exit_code=2,
        where="knows.csv:1",
        says="missing column 'b'",
    ),
]
