"""The package's version, in one place (the face, the command line and the manifest read it)."""

__version__ = "0.1.0"
