"""The Java and native pieces the test servers run on: Java, the Maven jar cache, binaries."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from servers._errors import ServerUnavailableError

REPO_ROOT = Path(__file__).resolve().parents[1]
SERVERS_DIR = REPO_ROOT / "servers"

#: kind -> (version, folder holding its pom.xml); the jars land in <cache>/<kind>-<version>/lib
JAR_KINDS: dict[str, tuple[str, Path]] = {
    "gremlin": ("3.8.0", SERVERS_DIR / "gremlin"),
    "fuseki": ("5.6.0", SERVERS_DIR / "fuseki"),
}
#: JVM options for tests: C1-only JIT halves start-up (Gremlin Server 6.8 s -> 3.4 s here)
#: at the cost of peak speed; benchmarks should pass THROUGHPUT_JAVA_OPTIONS instead
QUICK_START_JAVA_OPTIONS: tuple[str, ...] = ("-Xmx2g", "-XX:TieredStopAtLevel=1")
THROUGHPUT_JAVA_OPTIONS: tuple[str, ...] = ("-Xmx4g",)
_COMPLETE_MARKER = ".complete"
_MAVEN_OUTPUT_CHARS = 6000


def cache_root() -> Path:
    """The jar cache: ``$GRAPHMILL_SERVERS_CACHE`` or ``<repo>/.cache/servers``."""
    return Path(os.environ.get("GRAPHMILL_SERVERS_CACHE") or REPO_ROOT / ".cache" / "servers")


def find_java() -> str:
    """The java executable: ``$JAVA_HOME/bin/java`` or ``java`` on PATH.

    Raises ServerUnavailableError when there is none.
    """
    java_home = os.environ.get("JAVA_HOME")
    if java_home and (Path(java_home) / "bin" / "java").is_file():
        return str(Path(java_home) / "bin" / "java")
    java = shutil.which("java")
    if java is None:
        raise ServerUnavailableError("no Java runtime found (install Java 17+ or set JAVA_HOME)")
    return java


def ensure_jars(kind: str) -> Path:
    """The folder holding the jars of ``kind`` ("gremlin" or "fuseki"), fetched if missing.

    Maven runs only when the cache lacks a complete copy (marked by a ``.complete`` file).
    A fresh copy goes to a scratch folder that is renamed into place, so concurrent callers
    never see half a folder; an unmarked folder (a manual ``mvn`` run, an interrupted fetch)
    is completed in place, never deleted, since a running server may be using its jars.
    Raises ServerUnavailableError when Maven is missing or the download fails.
    """
    if kind not in JAR_KINDS:
        raise ValueError(f"unknown jar kind {kind!r}; expected one of {sorted(JAR_KINDS)}")
    version, pom_dir = JAR_KINDS[kind]
    lib = cache_root() / f"{kind}-{version}" / "lib"
    if (lib / _COMPLETE_MARKER).is_file():
        return lib
    mvn = shutil.which("mvn")
    if mvn is None:
        raise ServerUnavailableError(f"Maven (mvn) is needed once to fetch the {kind} jars")
    lib.parent.mkdir(parents=True, exist_ok=True)
    in_place = lib.is_dir()
    target = lib if in_place else Path(tempfile.mkdtemp(prefix="lib-", dir=lib.parent))
    pom = str(pom_dir / "pom.xml")
    command = [
        mvn,
        "-q",
        "-B",
        "-f",
        pom,
        "dependency:copy-dependencies",
        f"-DoutputDirectory={target}",
    ]
    done = subprocess.run(command, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        if not in_place:
            shutil.rmtree(target, ignore_errors=True)
        output = (done.stdout + done.stderr)[-_MAVEN_OUTPUT_CHARS:]
        raise ServerUnavailableError(
            f"fetching the {kind} jars failed ({done.returncode}):\n{output}"
        )
    (target / _COMPLETE_MARKER).write_text(f"{kind} {version}\n")
    if not in_place:
        try:
            target.rename(lib)
        except OSError:  # another process got there first; its copy is as good as ours
            shutil.rmtree(target, ignore_errors=True)
    return lib
    mvn = shutil.which("mvn")
    if mvn is None:
        raise ServerUnavailableError(f"Maven (mvn) is needed once to fetch the {kind} jars")
    lib.parent.mkdir(parents=True, exist_ok=True)
    scratch = Path(tempfile.mkdtemp(prefix="lib-", dir=lib.parent))
    command = [
        mvn,
        "-q",
        "-B",
        "-f",
        str(pom_dir / "pom.xml"),
        "dependency:copy-dependencies",
        f"-DoutputDirectory={scratch}",
    ]
    done = subprocess.run(command, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        shutil.rmtree(scratch, ignore_errors=True)
        output = (done.stdout + done.stderr)[-_MAVEN_OUTPUT_CHARS:]
        raise ServerUnavailableError(
            f"fetching the {kind} jars failed ({done.returncode}):\n{output}"
        )
    (scratch / _COMPLETE_MARKER).write_text(f"{kind} {version}\n")
    shutil.rmtree(lib, ignore_errors=True)  # an incomplete copy from an interrupted run
    try:
        scratch.rename(lib)
    except OSError:  # another process won the race; its copy is as good as ours
        shutil.rmtree(scratch, ignore_errors=True)
    return lib


def executable_beside_python(name: str) -> str | None:
    """``name`` from the running interpreter's bin folder (a venv's console scripts), else PATH."""
    candidate = Path(sys.executable).parent / name
    if candidate.is_file() and os.access(candidate, os.X_OK):
        return str(candidate)
    return shutil.which(name)
