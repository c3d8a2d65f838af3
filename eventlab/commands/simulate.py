"""`eventlab simulate` (being written)."""

HELP = "simulate (being written)"


def add_arguments(parser):
    pass


def run(args):
    raise NotImplementedError
