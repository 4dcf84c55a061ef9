"""`python -m cohop ...` is the `cohop` command."""

import sys

from cohop.cli import main

sys.exit(main())
