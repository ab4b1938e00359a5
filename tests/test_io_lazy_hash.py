"""The provenance SHA-256 is computed on first access from the bytes that were decoded.

Reference: Python's hashlib SHA-256 (FIPS 180-4) of the files' bytes, cfg then dat (or the
whole .cff), computed independently here.
"""

from __future__ import annotations

import hashlib
import pickle
from pathlib import Path

import numpy as np

from recordscan.core.record import AnalogChannel, Provenance, Record
from recordscan.io import read, write


def _record() -> Record:
    t = np.arange(200) / 1000.0
    return Record(t_s=t, analog=(AnalogChannel("VA", np.sin(2 * np.pi * 50 * t), "V"),))


def test_digest_describes_the_bytes_decoded_even_if_the_file_changes(tmp_path: Path) -> None:
    cfg_path, dat_path = write(_record(), tmp_path / "r", data_format="BINARY")
    expected = hashlib.sha256(cfg_path.read_bytes() + dat_path.read_bytes()).hexdigest()
    rec = read(cfg_path, assign_roles=False)
    dat_path.write_bytes(b"\0" * dat_path.stat().st_size)  # changed after the read
    assert rec.provenance.sha256 == expected
    assert rec.provenance.hash_source == ()  # the bytes are let go once hashed


def test_digest_of_cff(tmp_path: Path) -> None:
    path = tmp_path / "r.cff"
    write(_record(), path, data_format="FLOAT32", cff=True)
    rec = read(path, assign_roles=False)
    assert rec.provenance.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_pickle_carries_the_digest_not_the_bytes() -> None:
    prov = Provenance(path="x", hash_source=(b"ab", b"c"))
    clone = pickle.loads(pickle.dumps(prov))
    assert clone.hash_source == ()
    assert clone.sha256 == hashlib.sha256(b"abc").hexdigest()
    assert clone == prov


def test_given_digest_and_memory_default() -> None:
    assert Provenance().sha256 == ""
    assert Provenance(sha256="ab" * 32).sha256 == "ab" * 32
