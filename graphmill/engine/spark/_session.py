"""One Spark session per process, set up from the spec's ``engine`` section.

Starting a JVM costs seconds, and stages open an engine each, so the session outlives the
engine: it is kept for the process and stopped at exit (or by :func:`stop_session`), and
rebuilt only when the settings change. What an engine registers (temporary views, cached
tables) is dropped when the engine closes, so no data outlives a stage.

Settings: ``engine.cluster`` is where Spark runs (``local[N]``, a ``spark://``, ``yarn`` or
``k8s://`` master URL, or a Spark Connect ``sc://`` URL; default ``local[threads or *]``);
``engine.memory_limit`` becomes the driver's memory for a local master, an explicit
``engine.spill_folder`` Spark's local scratch folder (``spark.local.dir``; the default
``<bundle>.spill`` is not used, so that one session serves every bundle),
``engine.cluster_settings`` extra ``spark.*`` settings. A local
driver binds to 127.0.0.1 with the web UI off and few shuffle partitions. The cluster URL is
never written to logs or messages with its credentials (:func:`redacted`).
"""

from __future__ import annotations

import atexit
import re
import warnings
from pathlib import Path
from typing import Any

from graphmill.engine._registry import memory_bytes
from graphmill.errors import MissingExtraError, SpecError
from graphmill.spec import EngineSpec

# pyspark warns about a newer pandas than it knows; the engine never goes through pandas.
_PANDAS_WARNING = {
    "message": "PySpark does not yet fully support pandas",
    "category": FutureWarning,
}
try:
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", **_PANDAS_WARNING)  # type: ignore[arg-type]
        from pyspark.sql import SparkSession
except ImportError as exc:
    raise MissingExtraError(
        f"the spark engine needs pyspark, which is not installed ({exc.name})",
        hint="install it with: pip install 'graphmill[spark]' (and Java 17 or later), "
        "or set engine.kind: local",
    ) from exc

#: The master URLs Spark takes, and Spark Connect's ``sc://``.
CLUSTER = re.compile(r"^(local(\[(\*|[1-9][0-9]*)(,[1-9][0-9]*)?\])?|yarn|(spark|k8s|sc)://\S+)$")
_CREDENTIALS = re.compile(r"(//)[^/@]*@|(;\s*(token|password|secret)[^=;]*=)[^;]*", re.I)

#: Settings every session gets; a local one also binds its driver to the loopback address.
BASE_SETTINGS = {
    "spark.ui.enabled": "false",
    "spark.ui.showConsoleProgress": "false",
    "spark.sql.session.timeZone": "UTC",
    "spark.sql.ansi.enabled": "true",
    "spark.sql.ansi.doubleQuotedIdentifiers": "true",  # the local engine's quoting
    # an Arrow table sent to Spark becomes one partition per batch: fewer, larger ones
    "spark.sql.execution.arrow.maxRecordsPerBatch": "262144",
    # positions and policed edges come back whole by design (24 bytes an edge): Spark's 1g
    # cap on collected results would fail a relation of about 45M edges whatever the memory
    "spark.driver.maxResultSize": "0",
}
LOCAL_SETTINGS = {
    "spark.driver.host": "127.0.0.1",
    "spark.driver.bindAddress": "127.0.0.1",
    "spark.sql.shuffle.partitions": "4",  # small inputs; adaptive execution coalesces
    "spark.default.parallelism": "2",
    "spark.sql.adaptive.enabled": "true",
}
LOG4J = Path(__file__).with_name("log4j2.properties")

_current: tuple[tuple[Any, ...], SparkSession] | None = None


def redacted(url: str) -> str:
    """``url`` without user information or token/password parameters.

    >>> redacted("sc://me:pw@spark.example:15002/;token=abc;user_id=me")
    'sc://***@spark.example:15002/;token=***;user_id=me'
    """
    return _CREDENTIALS.sub(lambda m: f"{m[1]}***@" if m[1] else f"{m[2]}***", url)


def cluster_of(settings: EngineSpec) -> str:
    """Where Spark runs: ``engine.cluster``, else ``local[threads]`` (every core if unset)."""
    cluster = settings.cluster or f"local[{settings.threads or '*'}]"
    if not CLUSTER.match(cluster):
        raise SpecError(
            f"{redacted(cluster)!r} is not a Spark master or Spark Connect URL",
            key_path="engine.cluster",
            hint="e.g. local[2], spark://host:7077, yarn, k8s://https://host:6443 "
            "or sc://host:15002",
        )
    return cluster


def _settings(settings: EngineSpec) -> dict[str, str]:
    cluster = cluster_of(settings)
    conf = dict(BASE_SETTINGS)
    if cluster.startswith("local"):
        conf |= LOCAL_SETTINGS
        # the driver runs every task in local mode: Spark's 1g default failed the check of a
        # 10M-edge graph (bench/README.md), so a local driver gets 4g unless told otherwise
        limit = memory_bytes(settings.memory_limit) if settings.memory_limit else 4 * 2**30
        conf["spark.driver.memory"] = f"{limit // 2**20}m"
        java = f"-Dlog4j2.configurationFile={LOG4J.as_uri()}"
        conf["spark.driver.extraJavaOptions"] = java
    if settings.spill_folder is not None and not cluster.startswith("sc://"):
        conf["spark.local.dir"] = str(settings.spill_folder)
    for name, value in (settings.cluster_settings or {}).items():
        conf[str(name)] = str(value).lower() if isinstance(value, bool) else str(value)
    return conf


def session_for(settings: EngineSpec) -> SparkSession:
    """The process's session for these settings, started (or restarted) when needed."""
    global _current
    cluster = cluster_of(settings)
    conf = _settings(settings)
    key = (cluster, tuple(sorted(conf.items())))
    if _current is not None and _current[0] == key:
        return _current[1]
    stop_session()
    builder = SparkSession.builder.appName("graphmill")
    if cluster.startswith("sc://"):
        builder = builder.remote(cluster)
    else:
        builder = builder.master(cluster)
        for name, value in conf.items():
            builder = builder.config(name, value)
    try:
        with warnings.catch_warnings():
            warnings.filterwarnings("ignore", **_PANDAS_WARNING)  # type: ignore[arg-type]
            session = builder.getOrCreate()
    except Exception as exc:  # the JVM or the cluster did not start: one line, no secrets
        first = redacted(str(exc).strip().splitlines()[0] if str(exc).strip() else repr(exc))
        raise SpecError(
            f"the spark engine could not start a session on {redacted(cluster)!r}: {first}",
            key_path="engine.cluster",
            hint="check that Java 17+ is installed (JAVA_HOME) and the cluster is reachable",
        ) from None
    if cluster.startswith("sc://"):  # a remote session takes SQL settings only
        for name, value in conf.items():
            if name.startswith("spark.sql."):
                session.conf.set(name, value)
    else:
        session.sparkContext.setLogLevel("ERROR")
    _current = (key, session)
    return session


def stop_session() -> None:
    """Stop the process's session, if one is running (also done at exit)."""
    global _current
    if _current is not None:
        session, _current = _current[1], None
        session.stop()


atexit.register(stop_session)
