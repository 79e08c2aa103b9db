"""qamsight SigMF and raw-IQ bindings against NumPy's own encoding of the same formats."""
import json

import numpy as np
import pytest

import qamsight as qs

pytestmark = pytest.mark.skipif("sigmf" not in qs._core._parts, reason="sigmf bindings not built")


def test_ci16_encoding_equals_numpy_rounding_and_clipping():
    # sigmf.hpp: signed b-bit code c <-> x = c * full_scale / 2^(b-1); writing rounds to the
    # nearest code and clips to +-(2^(b-1) - 1). SigMF 'ci16_le': interleaved I, Q little-endian
    # int16 (SigMF specification, core:datatype).
    x = np.array([0.5 + 0.25j, -1.2 + 0.0j, 0.9 - 0.5j, 1e-6 + 2.0j], dtype=np.complex64)
    fs = 1.0
    data, clipped = qs.encode_iq(x, qs.parse_iq_datatype("ci16_le"), fs)
    rails = np.empty(2 * len(x))
    rails[0::2], rails[1::2] = x.real, x.imag
    codes = np.clip(np.rint(rails * 32768 / fs), -32767, 32767).astype("<i2")
    assert data.dtype == np.uint8 and bytes(data) == codes.tobytes()
    assert clipped == 2  # -1.2 and 2.0 exceed full scale
    back = qs.decode_iq(data, qs.parse_iq_datatype("ci16_le"), fs)
    np.testing.assert_allclose(back.real, codes[0::2] / 32768.0, atol=1e-7)
    np.testing.assert_allclose(back.imag, codes[1::2] / 32768.0, atol=1e-7)


def test_decode_into_out_is_in_place():
    raw = np.arange(16, dtype="<f4").view(np.uint8)
    out = np.empty(8, dtype=np.complex64)
    got = qs.decode_iq(raw, qs.parse_iq_datatype("cf32_le"), out=out)
    assert got.__array_interface__["data"][0] == out.__array_interface__["data"][0]
    np.testing.assert_array_equal(out, np.arange(16, dtype=np.float32).view(np.complex64))
    with pytest.raises(ValueError, match="bytes"):
        qs.decode_iq(raw[:5], qs.parse_iq_datatype("cf32_le"))


def test_write_and_read_a_recording(tmp_path):
    x = (np.exp(2j * np.pi * 0.01 * np.arange(1000)) * 0.5).astype(np.complex64)
    spec = qs.SigmfWriteSpec()
    spec.datatype = "cf32_le"
    spec.sample_rate_hz = 2e6
    spec.description = "a tone"
    name = str(tmp_path / "tone")
    qs.write_sigmf(name, x, spec)
    meta = json.load(open(qs.sigmf_meta_path(name)))
    assert meta["global"]["core:datatype"] == "cf32_le" and meta["global"]["core:sample_rate"] == 2e6
    np.testing.assert_array_equal(np.fromfile(qs.sigmf_data_path(name), dtype="<c8"), x)
    rec = qs.read_sigmf(name)
    assert rec.sample_rate_hz == 2e6 and rec.description == "a tone"
    s = rec.samples
    assert not s.flags.writeable and s.__array_interface__["data"][0] == rec.samples.__array_interface__["data"][0]
    np.testing.assert_array_equal(s, x)


def test_reading_a_missing_recording_names_the_file(tmp_path):
    with pytest.raises(qs.InputError, match="nothing-here"):
        qs.read_sigmf(str(tmp_path / "nothing-here"))
    with pytest.raises(ValueError):
        qs.read_sigmf(str(tmp_path / "nothing-here"))
