"""The version of this binding: the project's one version (docs/versioning.md).

Kept equal to `project(ellipsa VERSION ...)` in the top CMakeLists.txt by the
test version.agree; pyproject.toml reads it from here without importing.
"""
__version__ = "0.1.0"
