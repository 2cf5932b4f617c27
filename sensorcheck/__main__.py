import sys

from sensorcheck.cli import main

sys.exit(main())
