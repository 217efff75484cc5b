"""``mapsection view``: the section page, a local server for drawing and moving section lines."""

from __future__ import annotations

import click

from ..caution import CAUTION
from ._common import note, warn


def free_port(preferred: int = 8765) -> int:
    """``preferred`` if it is free on 127.0.0.1, else a free port the system picks."""
    import socket

    for port in (preferred, 0):
        with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
            try:
                s.bind(("127.0.0.1", port))
            except OSError:
                continue
            return int(s.getsockname()[1])
    raise click.ClickException("no free port on 127.0.0.1")


@click.command(
    "view",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.argument("project", metavar="PROJECT.toml", type=click.Path(dir_okay=False))
@click.option("--section", metavar="NAME", help="Section shown first [default: the first].")
@click.option("--port", type=click.IntRange(0, 65535), default=None, metavar="N",
              help="Port on 127.0.0.1; 0 picks a free one [default: 8765, or a free one if "
                   "it is taken].")
@click.option("--no-browser", is_flag=True, help="Print the address only; do not open a browser.")
def command(project: str, section: str | None, port: int | None, no_browser: bool) -> None:
    """Open the section page: draw and move section lines on the map, watch the section redraw.

    Starts a web server on 127.0.0.1 only, prints its address (with a random
    token that every request must carry) and opens it in the browser. On the
    page: click on the map to draw a line, drag its vertices or the whole line;
    the profile, surface geology and apparent dips follow the pointer, the draft
    and the four checks follow when the drag ends. "Save line" writes the line
    into PROJECT.toml (keeping its comments; the previous file is kept as
    PROJECT.toml.bak); "Build" runs the normal build of the section. Ctrl-C stops
    the server.

    \b
    Example (the sample area):
      mapsection view sample_area/project.toml --section B
    """
    import secrets
    import threading
    import time
    import webbrowser

    import uvicorn

    from ..errors import MapsectionError
    from ..web.api import ViewState
    from ..web.app import create_app

    state = ViewState(project, section, warn=warn)
    try:
        try:  # the first draft pays for first-call costs: here, not on the page's first request
            state.warm()
        except MapsectionError as exc:
            warn(f"section {state.default_section}: {exc}")
        token = secrets.token_urlsafe(24)
        app = create_app(state, token)
        port = free_port() if port is None else free_port(0) if port == 0 else port
        url = f"http://127.0.0.1:{port}/?token={token}"
        config = uvicorn.Config(app, host="127.0.0.1", port=port, log_level="warning",
                                access_log=False, lifespan="off")
        server = uvicorn.Server(config)
        click.echo(url)
        note("serving the section page on 127.0.0.1 only; Ctrl-C stops it")
        if not no_browser:
            def open_when_ready() -> None:
                for _ in range(600):
                    if server.started:
                        webbrowser.open(url)
                        return
                    if server.should_exit:
                        return
                    time.sleep(0.05)

            threading.Thread(target=open_when_ready, daemon=True).start()
        server.run()
        if not server.started:
            raise click.ClickException(f"could not listen on 127.0.0.1:{port} (in use?)")
    finally:
        state.close()
