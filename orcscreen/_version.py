"""The version of orcscreen, in one place: the package metadata reads it (pyproject.toml,
[tool.setuptools.dynamic]) and ``orcscreen.__version__`` imports it, without importlib.metadata
(whose import took 40-80 ms of every start)."""

__version__ = "0.5.0"
