"""``eventlab inspect RECORD [--json]``: what a COMTRADE record holds."""

from __future__ import annotations

import json

HELP = "show a COMTRADE record's station, device, rates, times and channel table"


def add_arguments(parser) -> None:
    parser.add_argument("record", metavar="RECORD",
                        help="a .cfg (with its .dat), .cff, .dat, .zip or the record's stem")
    parser.add_argument("--json", action="store_true",
                        help="print the summary as JSON instead of a table")


def run(args) -> int:
    from eventlab.records.reader import read_record
    from eventlab.records.summary import format_summary, summarize

    record = read_record(args.record, values="primary")
    summary = summarize(record)
    if args.json:
        print(json.dumps(summary, indent=2, ensure_ascii=False))
    else:
        print(format_summary(summary))
    return 0
