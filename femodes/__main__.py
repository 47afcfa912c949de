import sys

from femodes.cli import main

sys.exit(main())
