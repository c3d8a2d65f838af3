"""eventlab tests (a package, so that the shared helpers import the same way in every pytest import mode)."""
