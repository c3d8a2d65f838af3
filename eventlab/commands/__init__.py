"""Sub-commands of the eventlab command line, one module each."""
