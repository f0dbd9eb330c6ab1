"""The ``trainopt serve`` command: the what-if page on this computer."""

from __future__ import annotations

from pathlib import Path

import typer

from trainopt.cli.failure import friendly

LOOPBACK = ("127.0.0.1", "localhost", "::1")


def serve_command(
    case_file: Path = typer.Argument(..., help="Station case (YAML)."),
    host: str = typer.Option("127.0.0.1", "--host", help="Address to listen on."),
    port: int = typer.Option(8050, "--port", min=1, max=65535, help="Port to listen on."),
    allow_other_hosts: bool = typer.Option(
        False, "--allow-other-hosts",
        help="Needed to listen on an address other than this computer's own (127.0.0.1)."),
) -> None:
    """Serve a what-if page and JSON API for one case at http://127.0.0.1:8050."""
    import trainopt
    from trainopt.errors import InputError

    if host not in LOOPBACK and not allow_other_hosts:
        raise InputError("--host", f"{host} would let other computers reach the page",
                         "keep the default 127.0.0.1, or add --allow-other-hosts")
    case = trainopt.load_case(case_file)
    try:
        import uvicorn

        from trainopt.web import create_app
    except ImportError as exc:
        raise InputError("serve", f"needs the web extra ({exc.name} is not installed)",
                         "pip install 'trainopt[web]'") from None

    if host not in LOOPBACK:
        typer.echo(f"warning: listening on {host}: anyone who can reach this address can use "
                   "the page and API; there is no sign-in", err=True)
    typer.echo(f"trainopt: {case.name} at http://{host}:{port} (Ctrl+C stops)", err=True)
    uvicorn.run(create_app(case), host=host, port=port, log_level="warning")


def register(app: typer.Typer) -> None:
    """Add the ``serve`` command to the ``trainopt`` app."""
    app.command("serve")(friendly(serve_command))
