"""Command line: ``samplewright spec --write | --check`` and ``samplewright serve``."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

DEFAULT_SPEC = Path("openapi/openapi.json")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="samplewright")
    sub = parser.add_subparsers(dest="command", required=True)
    spec = sub.add_parser("spec", help="write or check the OpenAPI document")
    mode = spec.add_mutually_exclusive_group(required=True)
    mode.add_argument("--write", action="store_true", help="write the generated document")
    mode.add_argument("--check", action="store_true", help="fail if the committed document differs")
    spec.add_argument("--path", type=Path, default=DEFAULT_SPEC)
    serve = sub.add_parser("serve", help="run the development server (use gunicorn in production)")
    serve.add_argument("--host", default=os.environ.get("HOST", "127.0.0.1"))
    serve.add_argument("--port", type=int, default=int(os.environ.get("PORT", "8000")))
    args = parser.parse_args(argv)

    if args.command == "spec":
        from .api.openapi import document

        text = document()
        if args.write:
            args.path.parent.mkdir(parents=True, exist_ok=True)
            args.path.write_text(text, encoding="utf-8")
            print(f"wrote {args.path}")
            return 0
        current = args.path.read_text(encoding="utf-8") if args.path.exists() else ""
        if current != text:
            print(f"{args.path} is out of date: run 'make spec'", file=sys.stderr)
            return 1
        print(f"{args.path} is up to date")
        return 0

    from .app import create_app

    create_app().run(host=args.host, port=args.port, debug=False)
    return 0


if __name__ == "__main__":
    sys.exit(main())
