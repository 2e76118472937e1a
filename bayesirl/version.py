"""The package version, in a module of its own (layer 0).

Any layer may read it; the package root (``import bayesirl``) re-exports every layer and may
not be imported from inside the package below the command line (tests/test_layers.py).
"""

__version__ = "0.1.0"
