"""Package list for setuptools (the rest of the metadata is in pyproject.toml).

Every package under desktop/ is discovered, never listed by hand, so a new subpackage is in
the wheel at once; resources/ and sample_sets/ sit at the top of the checkout and are mapped
to honebench.resources and honebench.sample_sets in pyproject's package-dir.
"""
from setuptools import find_packages, setup

setup(packages=find_packages(where="desktop")
      + ["honebench.resources", "honebench.sample_sets"])
