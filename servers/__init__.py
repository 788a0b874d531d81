"""Real test servers for graphmill (Gremlin Server, Fuseki, Oxigraph) on 127.0.0.1.

Not part of the installed package: tests and benchmarks put the repository root on
``sys.path`` and import ``servers.manage`` or ``servers.pytest_fixtures``.
"""
