"""The version of terrahop, in a module of its own so any module can read it without importing the package face."""

__version__ = "0.1.0"
