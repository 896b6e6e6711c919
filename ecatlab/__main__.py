import sys

from ecatlab.cli import main

sys.exit(main())
