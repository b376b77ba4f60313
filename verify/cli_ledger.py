"""``verify ledger``: check a nightly ledger's hash chain and triggers (argument parsing only)."""

from __future__ import annotations

import argparse
import re

EXIT_INTACT, EXIT_BROKEN = 0, 1
_HEX64 = re.compile(r"[0-9a-f]{64}")


def add_ledger(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "ledger",
        help="check a nightly ledger: its hash chain and its triggers",
        description=(
            "Check the hash chain of a nightly ledger (every row of entries, records and runs "
            "carries the hash of its content and of the row before it) and its append-only "
            "triggers. Reads only: nothing is created, migrated or repaired.\n\nexit status: "
            "0 intact (prints the entry count and the head hash); 1 broken (names the first "
            "changed, out-of-chain or removed row and every missing trigger); 2 the file is "
            "not a readable verify ledger."
        ),
        epilog=("example:\n  verify ledger reports/nightly/ledger.sqlite\n"
                "  verify ledger reports/nightly/ledger.sqlite --head 3f2a...e9 "
                "(the head printed on a digest)"),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("ledger", metavar="LEDGER", help="the ledger file (ledger.sqlite)")
    p.add_argument("--head", metavar="HASH", action="append", default=[],
                   help="a chain head printed earlier (on a digest or in a result JSON): the "
                        "check also fails when no row of the chain carries it, which catches "
                        "rows removed from the end; may be repeated")
    return p


def cmd_ledger(args: argparse.Namespace) -> int:
    import sqlite3

    from .errors import UsageError
    from .ledger import anchors_missing, check_ledger_file

    heads = [h.strip().lower() for h in args.head]
    bad = [h for h in heads if not _HEX64.fullmatch(h)]
    if bad:
        raise UsageError(f"--head {bad[0]!r}: a chain head is 64 hexadecimal characters, as "
                         "printed on the digest ('ledger head')")
    result = check_ledger_file(args.ledger)
    problems = result.problems()
    try:
        problems += anchors_missing(args.ledger, heads)
    except sqlite3.DatabaseError as exc:  # pragma: no cover - the file was just read
        problems.append(f"cannot look up the given heads: {exc}")
    counts = ", ".join(f"{n} {t}" for t, n in result.rows.items())
    if not problems:
        print(f"{args.ledger}: intact: {result.entries} entries; {result.head_seq} chained "
              f"rows ({counts}); chain head {result.head_hash}")
        return EXIT_INTACT
    for p in problems:
        print(f"broken: {p}")
    print(f"{args.ledger}: NOT intact ({len(problems)} problem(s)); the chain is sound up to "
          f"position {result.head_seq} (hash {result.head_hash})")
    return EXIT_BROKEN
