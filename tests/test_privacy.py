"""Warnings on properties that look personal (heuristics; common practice, no standard)."""

from __future__ import annotations

import pyarrow as pa
import pytest

from graphmill.connectors import open_source
from graphmill.privacy import looks_personal_name, looks_personal_values
from graphmill.snapshot import pull
from graphmill.spec import spec_from_dict


@pytest.mark.parametrize(
    ("name", "word"),
    [
        ("email", "email"),
        ("contactEmail", "email"),
        ("http://xmlns.com/foaf/0.1/name", "name"),  # FOAF's name property
        ("date_of_birth", "birth"),
        ("home_address", "address"),
        ("balance", None),
        ("segment", None),
        ("username", None),  # short words count only as whole words
    ],
)
def test_names_that_look_personal(name, word):
    assert looks_personal_name(name) == word


def test_values_that_look_personal():
    # example.org is reserved for examples (RFC 2606); the numbers are invented.
    mails = pa.array(["ann@example.org", "bo@example.org", None, "x"])
    assert looks_personal_values(mails) == "e-mail addresses"
    assert looks_personal_values(pa.array(["+44 20 7946 0000", "retail"])) == "phone numbers"
    assert looks_personal_values(pa.array(["retail", "wholesale", "online"])) is None
    assert looks_personal_values(pa.array([1, 2])) is None


def test_pull_warns_and_the_warning_reaches_the_snapshot(tmp_path, write):
    write("people.csv", "ref,contact,tier\np1,ann@example.org,gold\np2,bo@example.org,silver\n")
    spec = spec_from_dict(
        {
            "spec_version": 1,
            "source": {
                "kind": "table-files",
                "vertex_files": [{"path": "people.csv", "id_column": "ref", "type": "person"}],
            },
            "vertex_types": {
                "person": {"properties": {"reach": {"from": "contact"}, "tier": None}}
            },
            "output": {"bundle": "out/b"},
        },
        base_dir=tmp_path,
    )
    info = pull(spec, open_source(spec))
    assert len(info.warnings) == 1
    assert "person.reach may hold personal data" in info.warnings[0]
    assert "e-mail addresses" in info.warnings[0]
    assert "tier" not in info.warnings[0]
