"""The engines the differential tests run: ``local`` always, ``spark`` on a real local Spark.

``spark_cluster`` starts one ``local[2]`` Spark session (127.0.0.1, UI off) for the whole
test session and stops it at the end; every spark engine opened with the same settings
shares it. Without pyspark or Java the Spark tests skip, and fail under ``CI=true``.
"""

from __future__ import annotations

import os
import shutil
from collections.abc import Iterator

import pytest

from graphmill.spec import EngineSpec

#: The settings every Spark test uses (one session serves them all).
SPARK = EngineSpec(kind="spark", cluster="local[2]", threads=2)


def _in_ci() -> bool:
    return os.environ.get("CI", "").strip().lower() in ("1", "true", "yes")


@pytest.fixture(scope="session")
def spark_cluster() -> Iterator[EngineSpec]:
    """A real local Spark (``local[2]``) for the session; yields the engine settings."""
    problem = None
    try:
        import pyspark  # noqa: F401
    except ImportError:
        problem = "pyspark is not installed (pip install 'graphmill[spark]')"
    if problem is None and shutil.which("java") is None and not os.environ.get("JAVA_HOME"):
        problem = "no Java found (install a JDK 17+ or set JAVA_HOME)"
    if problem is None:
        from graphmill.engine.spark._session import session_for

        try:
            session_for(SPARK)
        except Exception as exc:  # reported as the skip or failure reason
            problem = f"Spark did not start: {exc}"
    if problem is not None:
        if _in_ci():
            pytest.fail(f"spark unavailable under CI: {problem}", pytrace=False)
        pytest.skip(f"spark unavailable: {problem}")
    from graphmill.engine.spark import stop_session

    try:
        yield SPARK
    finally:
        stop_session()


@pytest.fixture(params=["local", "spark"])
def engine_settings(request: pytest.FixtureRequest) -> EngineSpec:
    """The settings of an engine to check against the reference: local, then spark."""
    if request.param == "spark":
        spark: EngineSpec = request.getfixturevalue("spark_cluster")
        return spark
    return EngineSpec(kind="local", threads=2)
