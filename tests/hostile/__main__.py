"""``python -m tests.hostile``: run the campaign (see ``campaign.main``)."""

import sys

from .campaign import main

sys.exit(main())
