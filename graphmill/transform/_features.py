"""The feature matrix of one vertex type, from the spec's feature list.

Contract: features are encoded in spec order, each giving named float columns (see
``_encoders`` and ``_categorical``); with ``missing: indicator`` a 0/1 column
``<property>__missing`` follows (once per property, even if it is encoded twice). Encoders
are fitted on ``fit_rows`` only (the train part for the labelled type, every vertex for the
others) and applied to every vertex. ``categories`` adds no float column but an int64 code
array. Column names are unique per vertex type, or the spec is refused.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pyarrow as pa

from graphmill.errors import InputError, SpecError
from graphmill.spec import FeatureSpec
from graphmill.transform import _categorical as cat
from graphmill.transform import _dates as dt
from graphmill.transform import _encoders as enc
from graphmill.transform._encoders import BadValue
from graphmill.transform._pinned import CATEGORICAL, PinnedVocabularies


@dataclass(frozen=True)
class Encoded:
    """One feature's output over all vertices."""

    names: list[str]
    values: np.ndarray  # float64 [N, len(names)]
    statistics: dict[str, Any]
    missing: np.ndarray  # bool [N]
    codes: np.ndarray | None = None  # int64 [N], categories only


@dataclass
class FeatureTable:
    """Everything the features of one vertex type produced."""

    names: list[str] = field(default_factory=list)
    matrix: np.ndarray | None = None  # float32 [N, F], None when F == 0
    codes: dict[str, np.ndarray] = field(default_factory=dict)  # property -> int64 [N]
    encoders: list[dict[str, Any]] = field(default_factory=list)  # manifest entries
    warnings: list[str] = field(default_factory=list)


def encode_feature(
    feature: FeatureSpec,
    column: pa.Array,
    fit_rows: np.ndarray,
    pinned: list[str] | None = None,
) -> Encoded:
    """Fit ``feature`` on ``fit_rows`` of ``column`` and encode every row; a categorical
    feature with a ``pinned`` vocabulary uses it instead of the fitted one."""
    p, kind = feature.property, feature.encoding
    if kind in ("standardize", "min-max", "log", "identity"):
        values = enc.numeric_values(column)
        missing = np.isnan(values)
        if kind == "log":
            values = enc.log_values(values)
        if kind == "min-max":
            stats = enc.fit_range(values, fit_rows)
            return Encoded([f"{p}__minmax"], enc.apply_min_max(values, stats), stats, missing)
        stats = enc.fit_moments(values, fit_rows)
        if kind == "identity":
            return Encoded([p], enc.apply_identity(values, stats), stats, missing)
        suffix = "__log__standardized" if kind == "log" else "__standardized"
        return Encoded([p + suffix], enc.apply_standardize(values, stats), stats, missing)
    if kind == "boolean":
        values = enc.boolean_values(column)
        missing = np.isnan(values)
        stats = {"fill": 0.0, "fitted_values": int((~missing[fit_rows]).sum())}
        return Encoded([p], np.where(missing, 0.0, values)[:, None], stats, missing)
    if kind == "datetime":
        stamps = enc.datetime_values(column)
        missing = np.asarray(stamps.is_null().to_numpy(zero_copy_only=False), dtype=bool)
        raw = enc.datetime_parts(stamps, feature.datetime_parts)
        stats = dt.fit_datetime(raw, feature.datetime_parts, fit_rows)
        names = dt.column_names(p, feature.datetime_parts)
        return Encoded(names, dt.apply_datetime(raw, stats), stats, missing)
    if kind == "multi-hot":
        lists = cat.list_strings(column)
        stats = cat.fit_list_vocabulary(lists.take(pa.array(fit_rows)), feature.max_categories)
        stats = _pin(stats, pinned)
        missing = np.asarray(lists.is_null().to_numpy(zero_copy_only=False), dtype=bool)
        names = cat.column_names(p, stats["vocabulary"])
        return Encoded(names, cat.multi_hot(lists, stats["vocabulary"]), stats, missing)
    strings = cat.category_strings(column)
    stats = _pin(
        cat.fit_vocabulary(strings.take(pa.array(fit_rows)), feature.max_categories), pinned
    )
    codes = cat.category_codes(strings, stats["vocabulary"])
    stats["unknown_code"] = len(stats["vocabulary"])
    missing = np.asarray(strings.is_null().to_numpy(zero_copy_only=False), dtype=bool)
    if kind == "categories":
        return Encoded([], np.zeros((len(codes), 0)), stats, missing, codes)
    width = len(stats["vocabulary"]) + 1
    names = cat.column_names(p, stats["vocabulary"])
    return Encoded(names, cat.one_hot(codes, width), stats, missing)


def encode_vertex_features(
    vertex_type: str,
    table: pa.Table,
    features: list[FeatureSpec],
    fit_rows: np.ndarray,
    public_ids: pa.Array | Any,
    pinned: PinnedVocabularies | None = None,
    *,
    section: str = "features",
) -> FeatureTable:
    """Encode every feature of ``vertex_type``; rows of ``table`` are in index order.
    With ``pinned``, categorical features reuse that earlier bundle's vocabularies.
    ``public_ids[i]`` names row ``i`` in errors; ``section`` is the spec key of the list."""
    out = FeatureTable()
    blocks: list[np.ndarray] = []
    indicators: set[str] = set()
    for i, feature in enumerate(features):
        where = f"{section}.{vertex_type}[{i}]"
        column = _column(table, feature.property)
        try:
            vocabulary = None
            if pinned is not None and feature.encoding in CATEGORICAL:
                vocabulary = pinned.lookup(vertex_type, feature.property, feature.encoding)
                if vocabulary is None:
                    out.warnings.append(
                        f"{where}: {pinned.source['bundle']} has no {feature.encoding} "
                        f"vocabulary for {vertex_type}.{feature.property}; fitted afresh"
                    )
            result = encode_feature(feature, column, fit_rows, vocabulary)
            if vocabulary is not None and pinned is not None:
                result.statistics["pinned_from"] = dict(pinned.source)
            enc.check_float32_range(result.values)
        except BadValue as bad:
            record = None if bad.position is None else str(public_ids[bad.position])
            raise InputError(
                f"{vertex_type}.{feature.property}: {bad.message} (encoding {feature.encoding!r})",
                key_path=where,
                record=record,
                hint=bad.hint,
            ) from None
        names, values = list(result.names), result.values
        indicator = f"{feature.property}__missing"
        if feature.missing == "indicator" and indicator not in indicators:
            indicators.add(indicator)
            names.append(indicator)
            values = np.column_stack([values, result.missing.astype(np.float64)])
        entry = {
            "property": feature.property,
            "encoding": feature.encoding,
            "missing": feature.missing,
            "missing_values": int(result.missing.sum()),
            "columns": names,
            "statistics": result.statistics,
        }
        if result.codes is not None:
            if feature.property in out.codes:
                raise SpecError(
                    f"property {feature.property!r} is encoded as categories twice",
                    key_path=where,
                )
            out.codes[feature.property] = result.codes
            entry["code_column"] = f"{feature.property}__code"
        clash = sorted(set(names) & set(out.names))
        if clash or len(set(names)) != len(names):
            raise SpecError(
                f"feature column name {(clash or names)[0]!r} would appear twice in "
                f"vertex type {vertex_type!r}",
                key_path=where,
                hint="encode each property once per encoding, or rename the value",
            )
        out.names += names
        blocks.append(values)
        out.encoders.append(entry)
    if out.names:
        out.matrix = np.ascontiguousarray(np.column_stack(blocks), dtype=np.float32)
    return out


def _pin(stats: dict[str, Any], pinned: list[str] | None) -> dict[str, Any]:
    """``stats`` with the pinned vocabulary in place of the fitted one (fitted count kept)."""
    if pinned is None:
        return stats
    return {**stats, "vocabulary": list(pinned)}


def _column(table: pa.Table, name: str) -> pa.Array:
    if name not in table.column_names:
        raise InputError(
            f"the snapshot has no column {name!r}",
            hint="pull again with the current spec",
        )
    column = table.column(name)
    return column.combine_chunks() if isinstance(column, pa.ChunkedArray) else column
