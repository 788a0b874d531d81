"""Warnings for properties that look like personal data.

graphmill cannot know what is personal in a user's graph; it flags what *looks* personal so a
person decides. Two signals, both heuristics (common practice, no standard behind them):

* the property's name or source key contains a word often used for personal data
  (name, email, phone, address, birth, passport, national id, iban, ip address, ...);
* at least a fifth of a sample of its text values look like e-mail addresses, phone numbers,
  IBANs or IPv4 addresses.

>>> looks_personal_name("contact_email")
'email'
>>> looks_personal_name("balance") is None
True
"""

from __future__ import annotations

import re

import pyarrow as pa
import pyarrow.compute as pc

NAME_WORDS = (
    "name", "email", "e_mail", "mail", "phone", "mobile", "address", "street", "zip",
    "postcode", "birth", "dob", "passport", "ssn", "national_id", "tax_id", "iban", "account_no",
    "card_number", "ip_address", "ipaddr", "gender", "ethnic", "religion", "health", "salary",
    "geo", "latitude", "longitude",
)  # fmt: skip
VALUE_PATTERNS = {
    "e-mail addresses": r"^[^@\s]+@[^@\s]+\.[A-Za-z]{2,}$",
    "phone numbers": r"^\+?[0-9][0-9 ()./-]{6,}[0-9]$",
    "IBANs": r"^[A-Z]{2}[0-9]{2}[A-Z0-9 ]{11,30}$",
    "IPv4 addresses": r"^([0-9]{1,3}\.){3}[0-9]{1,3}$",
}
SAMPLE = 1000
SHARE = 0.2
_SPLIT = re.compile(r"[^a-z0-9]+")


def looks_personal_name(name: str) -> str | None:
    """The personal-data word found in ``name`` (an identifier or IRI), or None."""
    text = name.lower()
    tail = re.split(r"[#/:]", text)[-1]
    words = "_" + "_".join(_SPLIT.split(re.sub(r"([a-z])([A-Z])", r"\1_\2", tail))) + "_"
    words = words.lower()
    for word in NAME_WORDS:
        if f"_{word}_" in words or (len(word) > 4 and word in words):
            return word
    return None


def looks_personal_values(column: pa.ChunkedArray | pa.Array) -> str | None:
    """What a sample of a text column looks like, when a fifth of it matches a pattern."""
    if not (pa.types.is_string(column.type) or pa.types.is_large_string(column.type)):
        return None
    values = pc.drop_null(column.slice(0, SAMPLE))
    if len(values) == 0:
        return None
    for what, pattern in VALUE_PATTERNS.items():
        hits = pc.sum(pc.match_substring_regex(values, pattern)).as_py() or 0
        if hits >= SHARE * len(values):
            return what
    return None


def personal_data_warnings(
    table_name: str, table: pa.Table, source_keys: dict[str, str]
) -> list[str]:
    """Warnings for the columns of ``table`` (a snapshot table) that look personal."""
    out: list[str] = []
    for column in table.column_names:
        if column in ("vertex_id", "source_id", "target_id"):
            continue
        word = looks_personal_name(column) or looks_personal_name(source_keys.get(column, ""))
        values = looks_personal_values(table.column(column))
        if word or values:
            why = f"its name suggests '{word}'" if word else f"its values look like {values}"
            out.append(
                f"{table_name}.{column} may hold personal data ({why}); keep it only if your "
                "data-protection rules allow, or drop it from the spec"
            )
    return out
