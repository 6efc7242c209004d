"""`inventory user ...`: the people who sign in to the web app (the shop's admin runs these
on the server)."""

from __future__ import annotations

import sys

import typer

from inventory.cli.common import print_json, print_table, reading, say, unit_of_work
from inventory.core.errors import InventoryError

app = typer.Typer(help="People who sign in to the web app: add, list, disable.",
                  no_args_is_help=True)


def _read_password(from_stdin: bool) -> str:
    if from_stdin:
        line = sys.stdin.readline()
        if not line:
            raise InventoryError("--password-stdin: nothing on standard input")
        return line.rstrip("\r\n")
    import getpass

    first = getpass.getpass("Password: ")
    if getpass.getpass("Password again: ") != first:
        raise InventoryError("the two passwords differ: nothing saved")
    return first


@app.command()
def add(ctx: typer.Context,
        name: str = typer.Argument(..., help="Sign-in name, e.g. sam."),
        role: str = typer.Option(..., "--role", help="technician, manager or admin."),
        password_stdin: bool = typer.Option(False, "--password-stdin",
                                            help="Read the password from standard input "
                                                 "(one line) instead of asking."),
        ) -> None:
    """Add a person who can sign in; the password is asked without echo."""
    from inventory.people import service as people

    people.check_name(name)
    people.check_role(role)
    password = people.check_password(_read_password(password_stdin))
    with unit_of_work(ctx) as s:
        p = people.add_person(s, name, role, password)
    say(f"added {p.name} ({p.role})")


@app.command("list")
def list_(ctx: typer.Context,
          as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """Everyone who can (or could) sign in, with their role."""
    from inventory.people import service as people

    with reading(ctx) as s:
        rows = people.list_people(s)
    if as_json:
        print_json([p.to_dict() for p in rows])
        return
    print_table("People", ["name", "role", "active", "created"],
                [[p.name, p.role, "yes" if p.active else "no", f"{p.created:%Y-%m-%d}"]
                 for p in rows])


@app.command()
def disable(ctx: typer.Context,
            name: str = typer.Argument(..., help="Sign-in name.")) -> None:
    """Stop a person signing in (their bookings stay in the ledger under their name)."""
    from inventory.people import service as people

    with unit_of_work(ctx) as s:
        p = people.disable_person(s, name)
    say(f"disabled {p.name}")


def serve(ctx: typer.Context,
          host: str = typer.Option("127.0.0.1", "--host",
                                   help="Address to listen on (default this machine only)."),
          port: int = typer.Option(8000, "--port", min=1, max=65535, help="Port."),
          workers: int = typer.Option(1, "--workers", min=1,
                                      help="Worker processes (use PostgreSQL for more than 1)."),
          secure_cookies: bool = typer.Option(False, "--secure-cookies",
                                              help="Mark the session cookie Secure (behind a "
                                                   "TLS reverse proxy)."),
          ) -> None:
    """Serve the shop's web app (bench, stock, jobs, imports, plan, month end)."""
    import inspect
    import os

    import uvicorn

    from inventory.cli.common import engine, state

    st = state(ctx)
    if not st.db and not os.path.exists("inventory.db") and os.path.exists("demo.db"):
        st.db = "demo.db"  # `inventory demo && inventory serve` serves the demo shop
        say("no inventory.db here: serving the demo shop in demo.db")
    eng = engine(ctx)  # fails here, with the usual hint, when the database is missing or old
    url = eng.url.render_as_string(hide_password=False)
    os.environ["INVENTORY_DB"] = url
    if secure_cookies:
        os.environ["INVENTORY_SECURE_COOKIES"] = "1"
    shown = eng.url.render_as_string(hide_password=True)
    say(f"serving {shown} on http://{host}:{port}/ (Ctrl+C stops)")
    extra = {}
    if "timeout_worker_healthcheck" in inspect.signature(uvicorn.Config).parameters:
        # a worker busy reading a large catalog into memory must not be taken for dead
        extra["timeout_worker_healthcheck"] = 60
    uvicorn.run("inventory.web.app:create_app", factory=True, host=host, port=port,
                workers=workers, proxy_headers=True, log_level="warning", **extra)


def register(root: typer.Typer) -> None:
    root.add_typer(app, name="user")
    root.command("serve")(serve)
