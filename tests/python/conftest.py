"""Shared fixtures of the cross-checks in tests/python.

These tests run with Debian's /usr/bin/python3 and compare libnmrpred with
references outside the project (RDKit from python3-rdkit, the NCI sample in
rdkit-data). The Python module is found through PYTHONPATH=<build>/python and
the command-line program through NMRPRED_BUILD_DIR (default: build/ at the
repository root), as scripts/test.sh sets them.
"""

import os
import pathlib

import pytest

REPO_ROOT = pathlib.Path(__file__).resolve().parents[2]


def build_dir():
    return pathlib.Path(os.environ.get("NMRPRED_BUILD_DIR", REPO_ROOT / "build")).resolve()


@pytest.fixture(scope="session")
def cli_path():
    """The nmrpred command-line program of the build under test."""
    path = build_dir() / "bin" / "nmrpred"
    if not path.is_file():
        pytest.fail(f"{path} does not exist: build the project first (bash scripts/test.sh)")
    return str(path)


@pytest.fixture(scope="session")
def nci_path():
    """First 5,000 NCI structures shipped by Debian's rdkit-data, found through RDKit."""
    from rdkit import RDConfig

    path = pathlib.Path(RDConfig.RDDataDir) / "NCI" / "first_5K.smi"
    if not path.is_file():
        pytest.fail(f"{path} is missing: install Debian's rdkit-data")
    return path


@pytest.fixture(scope="session")
def nci_smiles(nci_path):
    """SMILES of the NCI sample, one per record, in file order (the ID column dropped)."""
    out = []
    with open(nci_path, encoding="ascii") as f:
        for line in f:
            if line.strip():
                out.append(line.split()[0])
    return out
