"""``toymc cutflow``: the selection steps of a file with their efficiencies."""

__all__ = ("cmd_cutflow", "register")


def cmd_cutflow(args):
    """Print the cutflow table of ``args.file``."""
    from toymc.analysis.cutflow import cutflow_table

    print(cutflow_table(args.file))
    return 0


def register(subparsers):
    """Add ``cutflow`` to the toymc sub-parsers; returns its parser."""
    c = subparsers.add_parser(
        "cutflow", help="cutflow table of a ntuple with reco columns",
        description="Print the events passing each selection step of FILE, "
                    "with step and cumulative efficiencies and binomial errors.")
    c.add_argument("file", help="ROOT file written by toymc generate with a geometry")
    c.set_defaults(func=cmd_cutflow)
    return c
