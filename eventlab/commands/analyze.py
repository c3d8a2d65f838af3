"""`eventlab analyze` (being written)."""

HELP = "analyze (being written)"


def add_arguments(parser):
    pass


def run(args):
    raise NotImplementedError
