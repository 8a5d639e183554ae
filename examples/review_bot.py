"""A review bot in a few lines: analyze a circuit file, print a Markdown comment.

The comment embeds the plots through a share link, so reviewers without a key see them.
Run it beside a service (`haarline serve`):

    HAARLINE_URL=http://127.0.0.1:8000 HAARLINE_KEY=hl_... \\
        python examples/review_bot.py examples/ring-classifier.json --pr 17
"""

import argparse
import os
import sys

from haarline.client import Client, ServiceError


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Markdown review comment for one circuit")
    parser.add_argument("circuit", help="a .json, .yaml or .qasm file, or ref:NAME")
    parser.add_argument("--pr", default="local", help="pull request label (default: local)")
    parser.add_argument("--pairs", type=int, default=2000, help="fidelity pairs (default 2000)")
    args = parser.parse_args(argv)
    service = Client(
        os.environ.get("HAARLINE_URL", "http://127.0.0.1:8000"), os.environ.get("HAARLINE_KEY")
    )
    try:
        job = service.analyze(args.circuit, pairs=args.pairs, labels={"pr": args.pr})
    except ServiceError as exc:
        print(f"haarline refused {args.circuit}: {exc.detail}", file=sys.stderr)
        return 2
    if job.state != "succeeded":
        print(f"**haarline**: the analysis of `{args.circuit}` {job.state}: {job.error}")
        return 1
    link = service.share(job, ttl_seconds=30 * 86_400)
    print(f"### haarline on `{args.circuit}` (PR {args.pr})\n")
    print(service.summary(job, token=link["token"]))
    print(f"\n[The full report page]({link['url']}), open for 30 days.")
    return 0


if __name__ == "__main__":
    sys.exit(main())
