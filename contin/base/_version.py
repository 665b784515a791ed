"""The version of contin, in one place: records, the compile cache and the package read it here."""

__version__ = "0.1.0"
