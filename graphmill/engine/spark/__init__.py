"""The spark engine: the plan on Apache Spark, local (``local[N]``) or on a cluster.

Needs the ``spark`` extra (pyspark) and Java 17+; imported only when opened.
"""

from graphmill.engine.spark._engine import SparkEngine
from graphmill.engine.spark._session import stop_session

__all__ = ["SparkEngine", "stop_session"]
