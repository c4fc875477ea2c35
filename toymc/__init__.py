"""toymc: a fast toy Monte Carlo for light long-lived particles at an e+e- collider."""

__version__ = "0.1.0"
