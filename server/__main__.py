"""The command line: ``python -m server serve | migrate | demo | create-user | backup``.

Every setting comes from the environment (DATABASE_URL, SECRET_KEY ...)
through ``server.config.get_settings()``. Exit codes: 0 done, 1 failed
(the database could not be reached ...), 2 bad usage or a refusal.
"""

from __future__ import annotations

import argparse
import getpass
import os
import shlex
import sqlite3
import sys
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING

from pydantic import ValidationError
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import OperationalError
from sqlalchemy.orm import Session

from server.accounts.models import Role
from server.common.errors import Conflict, InvalidInput
from server.config import Settings, get_settings

if TYPE_CHECKING:
    from server.demo import DemoSignIn

# The commands import the rest of the planner when they run, so `--help`, a
# usage error and the PostgreSQL backup advice answer at once.

EXIT_OK = 0
EXIT_FAILED = 1
EXIT_REFUSED = 2


class Refusal(Exception):
    """A request the command will not carry out; the message says why and what to do."""


class Failed(Exception):
    """The command ran and did not succeed; the message says what went wrong."""


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        settings = get_settings()
    except ValidationError as error:
        messages = "; ".join(str(e["msg"]).removeprefix("Value error, ") for e in error.errors())
        print(f"error: the settings are not usable: {messages}", file=sys.stderr)
        return EXIT_REFUSED
    command: Callable[[argparse.Namespace, Settings], int] = args.run
    try:
        return command(args, settings)
    except Refusal as refusal:
        print(f"error: {refusal}", file=sys.stderr)
        return EXIT_REFUSED
    except Failed as failure:
        print(f"error: {failure}", file=sys.stderr)
        return EXIT_FAILED
    except OperationalError as error:
        print(
            f"error: cannot use the database at {_safe_url(settings.database_url)}: "
            f"{error.orig or error}",
            file=sys.stderr,
        )
        return EXIT_FAILED


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="python -m server",
        description="Emergency Lighting Retrofit Planner. Settings come from the environment "
        "(DATABASE_URL, SECRET_KEY, MODE ...; see DEVELOPERS.md).",
    )
    commands = parser.add_subparsers(title="commands", required=True, metavar="COMMAND")

    serve = commands.add_parser(
        "serve",
        help="serve the web app",
        description="Serve the web app with uvicorn on DATABASE_URL. Run `migrate` first.",
    )
    serve.add_argument("--host", default="127.0.0.1", help="address to listen on [127.0.0.1]")
    serve.add_argument("--port", type=int, default=8000, help="port to listen on [8000]")
    serve.add_argument(
        "--workers",
        type=_positive_int,
        default=1,
        help="worker processes [1]; more than one needs the same SECRET_KEY in every worker "
        "(set it, or let development mode keep one in ./var/)",
    )
    serve.set_defaults(run=run_serve)

    migrate = commands.add_parser(
        "migrate",
        help="bring the database schema up to date",
        description="Run the Alembic migrations up to the newest one (upgrade head) on "
        "DATABASE_URL. Safe to run again: a database already at head is left as it is.",
    )
    migrate.set_defaults(run=run_migrate)

    demo = commands.add_parser(
        "demo",
        help="load the demo scenario",
        description="Load the demo scenario (an invented firm, its users, a generic catalogue "
        "and a surveyed two-storey building) into an empty, migrated database, and print "
        "the demo sign-in. A database that already holds an organisation is refused.",
    )
    when_not_empty = demo.add_mutually_exclusive_group()
    when_not_empty.add_argument(
        "--force",
        action="store_true",
        help="load into a database that holds data: delete the demo firm (by its name) if it "
        "is there and load it again; other firms are never touched",
    )
    when_not_empty.add_argument(
        "--if-empty",
        action="store_true",
        help="load only when the database is empty; otherwise leave it and exit 0",
    )
    demo.set_defaults(run=run_demo)

    create_user = commands.add_parser(
        "create-user",
        help="add a user (password from standard input)",
        description="Add a user to an organisation, creating the organisation if it does not "
        "exist. The password is read from standard input (asked for on a terminal, otherwise "
        "the first line), never from the command line.",
    )
    create_user.add_argument("email", metavar="EMAIL", help="the user's email (their sign-in)")
    create_user.add_argument("--org", required=True, metavar="NAME", help="organisation name")
    create_user.add_argument(
        "--role",
        required=True,
        choices=[role.value for role in Role],
        help="what the user may do: surveyor < estimator < supervisor < admin",
    )
    create_user.add_argument("--name", default="", metavar="NAME", help="the user's full name")
    create_user.set_defaults(run=run_create_user)

    backup = commands.add_parser(
        "backup",
        help="copy the database safely while the app runs",
        description="SQLite: write a consistent copy of the database to PATH with SQLite's "
        "online backup (the app may keep running), then check the copy's integrity. "
        "PostgreSQL: print the pg_dump command to run instead.",
    )
    backup.add_argument("path", metavar="PATH", help="the new backup file (must not exist)")
    backup.set_defaults(run=run_backup)
    return parser


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError("give 1 or more")
    return value


def _safe_url(database_url: str) -> str:
    return make_url(database_url).render_as_string(hide_password=True)


@contextmanager
def _session(settings: Settings) -> Iterator[Session]:
    from server.db import make_engine, make_session_factory

    engine = make_engine(settings.database_url, busy_timeout_ms=settings.sqlite_busy_timeout_ms)
    try:
        with make_session_factory(engine)() as session:
            yield session
    finally:
        engine.dispose()


# --- serve -------------------------------------------------------------------


def run_serve(args: argparse.Namespace, settings: Settings) -> int:
    import uvicorn

    print(f"Serving the planner on http://{_url_host(args.host)}:{args.port}/ (Ctrl+C stops)")
    print(f"Database: {_safe_url(settings.database_url)}", flush=True)
    if args.workers > 1:
        uvicorn.run(
            "server.app:create_app",
            factory=True,
            host=args.host,
            port=args.port,
            workers=args.workers,
        )
    else:
        from server.app import create_app

        uvicorn.run(create_app(settings), host=args.host, port=args.port)
    return EXIT_OK


def _url_host(host: str) -> str:
    return f"[{host}]" if ":" in host else host


# --- migrate -----------------------------------------------------------------


def run_migrate(_args: argparse.Namespace, settings: Settings) -> int:
    from server import migrate

    migrate.upgrade(settings.database_url)
    print(f"Database {_safe_url(settings.database_url)} is up to date.")
    return EXIT_OK


# --- demo --------------------------------------------------------------------


def run_demo(args: argparse.Namespace, settings: Settings) -> int:
    from server import demo

    with _session(settings) as session:
        _require_migrated(session, settings.database_url)
        if not demo.database_is_empty(session=session):
            if args.if_empty:
                print("The database already holds data; the demo scenario was left as it is.")
                if demo.demo_org(session=session) is not None:
                    print(_sign_in_text(demo.demo_sign_in(), settings))
                return EXIT_OK
            if not args.force:
                raise Refusal(
                    "the database already holds data, so the demo scenario was not loaded. "
                    "Use an empty database, or add --force to replace the demo firm "
                    f"({demo.DEMO_ORG_NAME}) and nothing else."
                )
            if demo.delete_demo(session=session):
                print(f"Deleted the demo firm {demo.DEMO_ORG_NAME} and everything it owned.")
        try:
            sign_in = demo.load_demo(session=session)
        except Conflict as conflict:
            raise Refusal(f"{conflict.message} The demo scenario was not loaded.") from None
        session.commit()
    print(f"Loaded the demo scenario into {_safe_url(settings.database_url)}.")
    print(_sign_in_text(sign_in, settings))
    return EXIT_OK


def _require_migrated(session: Session, database_url: str) -> None:
    """Refuse a database whose schema is not the one this code needs."""
    from alembic.runtime.migration import MigrationContext
    from alembic.script import ScriptDirectory

    from server.migrate import alembic_config

    current = set(MigrationContext.configure(session.connection()).get_current_heads())
    needed = set(ScriptDirectory.from_config(alembic_config(database_url)).get_heads())
    if current != needed:
        at = ", ".join(sorted(current)) or "no schema yet"
        raise Refusal(
            f"the database is not up to date (at {at}; this version needs "
            f"{', '.join(sorted(needed))}): run `python -m server migrate` first."
        )


def _sign_in_text(sign_in: DemoSignIn, settings: Settings) -> str:
    width = max(len("password"), *(len(role.value) for role, _ in sign_in.users))
    lines = [
        f"Demo sign-in for {sign_in.org_name}",
        f"  {'open':<{width}}  {settings.public_base_url.rstrip('/')}/signin",
        *(f"  {role.value:<{width}}  {email}" for role, email in sign_in.users),
        f"  {'password':<{width}}  {sign_in.password}   (every demo user; demo data only)",
    ]
    return "\n".join(lines)


# --- create-user -------------------------------------------------------------


def run_create_user(args: argparse.Namespace, settings: Settings) -> int:
    from server.accounts import service as accounts

    password = _read_password()
    with _session(settings) as session:
        _require_migrated(session, settings.database_url)
        org = accounts.get_or_create_org(session=session, name=args.org.strip())
        try:
            user = accounts.create_user(
                session=session,
                org=org,
                email=args.email,
                password=password,
                role=Role(args.role),
                name=args.name,
            )
        except InvalidInput as invalid:
            raise Refusal(f"{invalid.field}: {invalid.message}; no user was created.") from None
        except Conflict as conflict:
            raise Refusal(f"{conflict.message} No user was created.") from None
        session.commit()
        print(f"Created {user.role} {user.email} in {org.name}.")
    return EXIT_OK


def _read_password() -> str:
    if sys.stdin.isatty():
        first = getpass.getpass("Password: ")
        if getpass.getpass("Password again: ") != first:
            raise Refusal("password: the two entries differ; no user was created.")
        return first
    line = sys.stdin.readline()
    if not line:
        raise Refusal("password: standard input was empty; send the password on one line.")
    return line.rstrip("\r\n")


# --- backup ------------------------------------------------------------------


def run_backup(args: argparse.Namespace, settings: Settings) -> int:
    url = make_url(settings.database_url)
    target = Path(args.path)
    if url.get_backend_name() == "postgresql":
        print(pg_dump_command(url, target))
        print(
            "Run it on a machine that reaches the server. The password is not printed: "
            "pg_dump asks for it, or reads PGPASSWORD or ~/.pgpass."
        )
        return EXIT_OK
    if url.get_backend_name() != "sqlite":
        raise Refusal(f"backup knows SQLite and PostgreSQL, not {url.get_backend_name()}.")
    source = Path(url.database or "")
    if not url.database or url.database == ":memory:":
        raise Refusal("an in-memory database cannot be backed up.")
    if not source.is_file():
        raise Refusal(f"there is no database file at {source}.")
    if target.exists():
        raise Refusal(f"{target} exists already; give a new file name.")
    if not target.parent.is_dir():
        raise Refusal(f"the folder {target.parent} does not exist.")
    size_bytes = backup_sqlite(source, target)
    print(f"Backed up {source} to {target} ({_size_text(size_bytes)}); integrity check: ok.")
    return EXIT_OK


def pg_dump_command(url: URL, target: Path) -> str:
    """The pg_dump command for a PostgreSQL URL, without its password."""
    parts = ["pg_dump", "--format=custom", f"--file={target}"]
    if url.host:
        parts.append(f"--host={url.host}")
    if url.port:
        parts.append(f"--port={url.port}")
    if url.username:
        parts.append(f"--username={url.username}")
    parts.append(f"--dbname={url.database or ''}")
    return shlex.join(parts)


def backup_sqlite(source: Path, target: Path) -> int:
    """Copy an SQLite database with its online backup API; return the copy's size.

    The copy is taken in one step inside one read transaction, so it is a
    consistent snapshot even while the app writes (in WAL mode writers go on
    meanwhile). It is written beside the target and renamed into place only
    once ``PRAGMA integrity_check`` has passed, so a failed backup leaves no
    file that looks like a good one.
    """
    partial = target.with_name(f".{target.name}.partial")
    partial.unlink(missing_ok=True)
    src = sqlite3.connect(f"{source.resolve().as_uri()}?mode=ro", uri=True)
    try:
        dst = sqlite3.connect(partial)
        try:
            src.backup(dst)
            # One self-contained file: no -wal beside the copy.
            dst.execute("PRAGMA journal_mode=DELETE")
            verdict = [row[0] for row in dst.execute("PRAGMA integrity_check")]
        finally:
            dst.close()
    finally:
        src.close()
    if verdict != ["ok"]:
        partial.unlink(missing_ok=True)
        raise Failed(f"the copy failed its integrity check ({'; '.join(verdict)}); none kept.")
    os.replace(partial, target)
    return target.stat().st_size


def _size_text(size_bytes: int) -> str:
    if size_bytes < 1024 * 1024:
        return f"{size_bytes / 1024:.1f} KiB"
    return f"{size_bytes / (1024 * 1024):.1f} MiB"


if __name__ == "__main__":
    try:
        sys.exit(main())
    except BrokenPipeError:
        # The reader went away (`... | head`): stop quietly, as shell tools do.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        sys.exit(EXIT_FAILED)
