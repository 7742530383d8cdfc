import sys

from gnssrel.cli import main

sys.exit(main())
