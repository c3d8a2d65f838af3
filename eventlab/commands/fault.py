"""`eventlab fault` (being written)."""

HELP = "fault (being written)"


def add_arguments(parser):
    pass


def run(args):
    raise NotImplementedError
