"""A real PostgreSQL with PostGIS for the tests, from Debian's packages, never downloaded.

The server is made with ``initdb`` in a temporary folder and listens on 127.0.0.1 at a
free port (``pg_ctl start``), trust authentication on the loopback only; it is stopped
and removed at the end of the session.  ``initdb`` refuses to run as root: as root the
server runs as ``nobody`` (``runuser``), with the folder owned by that user.  Every test
gets a fresh database copied from a template that has ``CREATE EXTENSION postgis``.

The tests skip, saying why, where the binaries (Debian ``postgresql``), the PostGIS
extension files (Debian ``postgresql-15-postgis-3``) or psycopg/SQLAlchemy are missing.
"""

from __future__ import annotations

import itertools
import os
import shutil
import socket
import subprocess
import tempfile
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest

PG_ROOT = Path("/usr/lib/postgresql")
EXT_ROOT = Path("/usr/share/postgresql")
TEMPLATE = "gc_template"
_names = itertools.count(1)


@dataclass(frozen=True)
class Server:
    """A running test server: its port and how to make DSNs to it."""

    port: int
    folder: Path

    def dsn(self, dbname: str, user: str = "postgres") -> str:
        """Return a URI DSN of one database."""
        return f"postgresql://{user}@127.0.0.1:{self.port}/{dbname}"


def _binaries() -> tuple[Path, str] | str:
    """(bin folder, major version) of the newest PostgreSQL with PostGIS, or why not."""
    found = sorted(PG_ROOT.glob("*/bin/initdb"), key=lambda p: int(p.parts[-3])
                   if p.parts[-3].isdigit() else 0)
    if not found:
        return ("PostgreSQL binaries missing (/usr/lib/postgresql/*/bin/initdb): "
                "apt-get install postgresql postgresql-15-postgis-3")
    for initdb in reversed(found):
        version = initdb.parts[-3]
        if (EXT_ROOT / version / "extension" / "postgis.control").is_file():
            return initdb.parent, version
    return (f"PostGIS extension files missing ({EXT_ROOT}/<version>/extension/postgis.control): "
            "apt-get install postgresql-15-postgis-3")


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _as_server_user(cmd: list[str]) -> list[str]:
    """Prefix a command to run it as ``nobody`` when the tests run as root."""
    if os.geteuid() != 0:
        return cmd
    runuser = shutil.which("runuser")
    if runuser is None:
        pytest.skip("the tests run as root and runuser (util-linux) is missing: initdb "
                    "refuses root, so the PostGIS tests cannot start a server")
    return [runuser, "-u", "nobody", "--", *cmd]


@pytest.fixture(scope="session")
def pg_server() -> Iterator[Server]:
    """Start PostgreSQL with PostGIS on the loopback address; stop it at the end."""
    found = _binaries()
    if isinstance(found, str):
        pytest.skip(found)
    try:
        import psycopg
        import sqlalchemy  # noqa: F401 - reading back with geopandas needs it
    except ImportError as err:
        pytest.skip(f"PostGIS tests need psycopg 3 and SQLAlchemy: {err} "
                    "(pip install 'geo_corrosion[scale]')")
    bindir, _version = found
    # as root the server user must reach the folder: /tmp, not a private TMPDIR
    folder = Path(tempfile.mkdtemp(prefix="gc_pg_", dir="/tmp" if os.geteuid() == 0 else None))
    if os.geteuid() == 0:
        import pwd

        nobody = pwd.getpwnam("nobody")
        os.chown(folder, nobody.pw_uid, nobody.pw_gid)
    data, log = folder / "data", folder / "server.log"
    init = subprocess.run(
        _as_server_user([str(bindir / "initdb"), "-D", str(data), "-U", "postgres",
                         "-A", "trust", "-E", "UTF8", "--locale=C", "--no-sync"]),
        capture_output=True, text=True, check=False)
    if init.returncode != 0:
        shutil.rmtree(folder, ignore_errors=True)
        pytest.fail(f"initdb failed: {init.stderr.strip()}")
    port = _free_port()
    start = subprocess.run(
        _as_server_user([str(bindir / "pg_ctl"), "-D", str(data), "-l", str(log), "-w",
                         "-t", "60", "-o",
                         f"-h 127.0.0.1 -p {port} -k {folder} -F -c full_page_writes=off",
                         "start"]),
        capture_output=True, text=True, check=False)
    server = Server(port, folder)
    try:
        if start.returncode != 0:
            tail = log.read_text(errors="replace")[-2000:] if log.exists() else ""
            pytest.fail(f"pg_ctl start failed: {start.stderr.strip()}\n{tail}")
        with psycopg.connect(server.dsn("postgres"), autocommit=True) as conn:
            conn.execute(f"CREATE DATABASE {TEMPLATE}")
        with psycopg.connect(server.dsn(TEMPLATE), autocommit=True) as conn:
            conn.execute("CREATE EXTENSION postgis")
        yield server
    finally:
        subprocess.run(_as_server_user([str(bindir / "pg_ctl"), "-D", str(data), "-m", "immediate",
                                        "-w", "stop"]),
                       capture_output=True, check=False)
        shutil.rmtree(folder, ignore_errors=True)


@pytest.fixture
def database(pg_server: Server) -> Iterator[str]:
    """DSN of a fresh database with PostGIS (a copy of the session's template), dropped after.

    ``STRATEGY FILE_COPY`` copies the template's files instead of writing them all to the
    WAL (PostgreSQL 15 manual, CREATE DATABASE): half the disk traffic per test.
    """
    import psycopg

    name = f"gc_test_{next(_names)}"
    with psycopg.connect(pg_server.dsn("postgres"), autocommit=True) as conn:
        conn.execute(f"CREATE DATABASE {name} TEMPLATE {TEMPLATE} STRATEGY FILE_COPY")
    yield pg_server.dsn(name)
    with psycopg.connect(pg_server.dsn("postgres"), autocommit=True) as conn:
        conn.execute(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)")


@pytest.fixture(scope="session")
def run_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Output folder of the small synthetic site (GeoPackage and the CSV tables only)."""
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("pg_site")
    site = make_synthetic_site(root / "deck_north")
    out = root / "out_north"
    run(site, out, exporters=("geopackage", "quantities"))
    return out
