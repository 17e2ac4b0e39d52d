"""Package discovery for the two top-level folders; everything else is in pyproject.toml.

``plugins/`` is installed as ``masstrail_plugins`` (``package-dir`` in pyproject.toml), which
setuptools' declarative ``packages.find`` cannot express, so its packages are found here.
"""

from setuptools import find_packages, setup

setup(
    packages=[
        *find_packages(include=["capture", "capture.*"]),
        "masstrail_plugins",
        *(f"masstrail_plugins.{name}" for name in find_packages("plugins")),
    ]
)
