import _signal
import os
import sys

_NAMES = {getattr(_signal, n): n for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(_signal, n)}


def _early_stop(signum, frame):
    """Until toymc.cli.main.main installs its handler: nothing is written yet, just stop."""
    try:
        os.write(2, f"toymc: interrupted ({_NAMES.get(signum, signum)})\n".encode())
    finally:
        os._exit(128 + signum)


for _s in _NAMES:
    _signal.signal(_s, _early_stop)

from toymc.cli.main import main

sys.exit(main())
