"""`eventlab inspect` (being written)."""

HELP = "inspect (being written)"


def add_arguments(parser):
    pass


def run(args):
    raise NotImplementedError
