"""The public surface: a sorted ``__all__`` whose names all resolve, and nothing private."""

from __future__ import annotations

import graphmill


def test_all_is_sorted_and_resolves():
    assert graphmill.__all__ == sorted(graphmill.__all__)
    for name in graphmill.__all__:
        assert getattr(graphmill, name) is not None, name


def test_no_private_names_exported():
    assert not [n for n in graphmill.__all__ if n.startswith("_") and n != "__version__"]


def test_every_error_has_a_distinct_documented_exit_code():
    from graphmill import errors

    kinds = [
        errors.SpecError,
        errors.SourceUnavailableError,
        errors.AuthenticationError,
        errors.SourceTimeoutError,
        errors.SourceServerError,
        errors.MalformedResponseError,
        errors.BundleIntegrityError,
        errors.MissingExtraError,
        graphmill.ChecksFailedError,
    ]
    codes = [k.exit_code for k in kinds]
    assert len(set(codes)) == len(codes)
    assert errors.InputError.exit_code == errors.SpecError.exit_code == 2


def test_versioning_tools_are_public():
    # comparing versions, verifying a chain of them, writing a dataset card
    for name in ("Comparison", "compare_bundles", "verify_lineage", "write_card"):
        assert name in graphmill.__all__ and callable(getattr(graphmill, name)), name
