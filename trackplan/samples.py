"""Where the example network and the sample climates are: one path for code, tests and docs.

They exist once, at the top of the repository: ``examples/`` (the example
network of a fictional railway, ``examples/network.toml``) and
``climate_samples/`` (the synthetic climates of three invented stations and
their seeded generator). ``setup.py`` ships both folders with the package as
``trackplan/examples/`` and ``trackplan/climate_samples/`` (same side-by-side
layout, so the network's ``../climate_samples/...`` paths hold after a plain
``pip install .``). In a checkout (editable install) they are read from the
repository folders themselves.

Every file under ``examples/`` is shipped (subfolders included); a new file
there needs no change to the packaging.
"""

from __future__ import annotations

from pathlib import Path

#: The shipped folders: name in the repository = name inside the installed package.
FOLDERS = ("examples", "climate_samples")


def folder(name: str) -> Path:
    """Path of a shipped sample folder, installed or in the checkout.

    Parameters
    ----------
    name : str
        ``"examples"`` or ``"climate_samples"``.

    Returns
    -------
    pathlib.Path
        ``<site-packages>/trackplan/<name>`` after a plain install, else
        ``<repository>/<name>`` (editable install from a checkout).
    """
    if name not in FOLDERS:
        raise ValueError(f"unknown sample folder {name!r}; accepted: {', '.join(FOLDERS)}")
    package = Path(__file__).resolve().parent
    installed = package / name
    return installed if installed.is_dir() else package.parent / name


def example_network() -> Path:
    """Path of the example network of the fictional railway (``examples/network.toml``)."""
    return folder("examples") / "network.toml"
