import sys

from eddyphone.cli import main

sys.exit(main())
