"""Start the dashboard: ``python -m app [--host 127.0.0.1] [--port 8050] [--data-dir DIR]``."""

from __future__ import annotations

import argparse
import logging
import sys
from collections.abc import Sequence


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="python -m app",
        description="Start the Haulcast dashboard (Intake, Model Bench, Forecast Board) with the demo data loaded.",
    )
    parser.add_argument(
        "--host",
        default="127.0.0.1",
        help="address to listen on (default 127.0.0.1: this machine only)",
    )
    parser.add_argument("--port", type=int, default=8050, help="port to listen on (default 8050)")
    parser.add_argument(
        "--data-dir",
        default=None,
        help="folder for uploaded datasets and the result cache (default $HAULCAST_DATA_DIR or ~/.haulcast)",
    )
    parser.add_argument(
        "--redis-url",
        default=None,
        help="cache results in Redis at this URL instead of the data folder",
    )
    parser.add_argument("--threads", type=int, default=8, help="request threads (default 8)")
    parser.add_argument("--no-samples", action="store_true", help="do not load the demo datasets")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    if not 1 <= args.port <= 65535:
        print(f"error: --port must be from 1 to 65535. Got {args.port} instead.", file=sys.stderr)
        return 2
    logging.basicConfig(
        level=logging.INFO, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    from app import create_app

    config: dict[str, object] = {"LOAD_SAMPLES": not args.no_samples}
    if args.data_dir:
        config["DATA_DIR"] = args.data_dir
    if args.redis_url:
        config["CACHE_REDIS_URL"] = args.redis_url
    try:
        app = create_app(config)
    except OSError as err:
        print(f"error: cannot use the data folder: {err}", file=sys.stderr)
        return 2
    host_for_url = "127.0.0.1" if args.host in ("0.0.0.0", "") else args.host
    banner = (
        f"Haulcast is running at http://{host_for_url}:{args.port}/  "
        f"(data in {app.server.config['DATA_DIR']})\nPress Ctrl+C to stop."
    )
    try:
        from waitress import create_server
    except ImportError:  # pragma: no cover - waitress is a dependency; werkzeug as a fallback
        from werkzeug.serving import run_simple

        print(banner, flush=True)
        run_simple(args.host, args.port, app.server, threaded=True)
        return 0
    try:
        server = create_server(
            app.server, host=args.host, port=args.port, threads=args.threads, ident="Haulcast"
        )
    except OSError as err:  # e.g. the port is taken
        print(
            f"error: cannot listen on {args.host}:{args.port}: {err.strerror or err}",
            file=sys.stderr,
        )
        return 2
    print(banner, flush=True)
    # Compile the screening likelihood now, in the background, not on the first request.
    import threading

    import forecasting_core

    threading.Thread(target=forecasting_core.warm_up, name="haulcast-warm-up", daemon=True).start()
    try:
        server.run()
    except KeyboardInterrupt:
        print("Stopped.", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
