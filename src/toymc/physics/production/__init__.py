
from toymc._lazy import submodules as _submodules

__getattr__ = _submodules(__name__)
