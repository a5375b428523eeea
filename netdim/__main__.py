import sys

from netdim.cli import main

sys.exit(main())
