"""Packaging beyond what pyproject.toml can say: templates/ and static/ stay at the top of the repository, and a
wheel carries them inside the package as app/templates and app/static, where ``app.settings.shipped_dir`` finds
them once installed."""

from setuptools import find_packages, setup

SHIPPED = {"app.templates": ("templates", ["*.html"]), "app.static": ("static", ["*.css", "*.js", "*.svg"])}

setup(
    packages=find_packages(include=["app", "app.*"]) + list(SHIPPED),
    package_dir={package: folder for package, (folder, _) in SHIPPED.items()},
    package_data={package: patterns for package, (_, patterns) in SHIPPED.items()},
)
