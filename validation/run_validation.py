"""Run the toymc validation suite (thin wrapper of ``toymc.cli.validate.run_validation``).

Usage: ``python3 validation/run_validation.py [--output-dir D] [--events N] [--quick]``
(the same as ``toymc validate``).  Exit status 0 when every check passes, 1 otherwise.
"""

import sys

from toymc.cli.validate import main_validate

if __name__ == "__main__":
    sys.exit(main_validate(sys.argv[1:]))
