"""`python -m contin`: the same as the `contin` command."""

import sys

from .commands._cli import main

sys.exit(main())
