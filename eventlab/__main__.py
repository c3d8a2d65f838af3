import sys

from eventlab.cli import main

sys.exit(main())
