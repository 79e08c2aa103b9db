"""qamsight FEC bindings: the K = 7 code from its octal generators, LDPC parity checks."""
import numpy as np
import pytest

import qamsight as qs

pytestmark = pytest.mark.skipif("fec" not in qs._core._parts, reason="fec bindings not built")


def octal_taps(g):
    # Generator 171 (octal) = 1 111 001: its MSB multiplies the current input (fec.hpp).
    return np.array([int(b) for b in format(g, "07b")], dtype=np.uint8)


def test_convolutional_encoder_equals_gf2_convolution():
    code = qs.ConvolutionalCode(qs.ConvolutionalCodeConfig(info_bits=100))
    info = qs.RandomStream(1, 0, qs.Substream.payload).fill_bits(100)
    mother = code.encode_mother(info)
    u = np.concatenate([info, np.zeros(6, np.uint8)]).astype(int)
    a = np.convolve(u, octal_taps(0o171))[: len(u)] % 2
    b = np.convolve(u, octal_taps(0o133))[: len(u)] % 2
    np.testing.assert_array_equal(mother[0::2], a)
    np.testing.assert_array_equal(mother[1::2], b)
    coded = code.encode(info)
    assert len(coded) == code.coded_bits == 2 * 106 and code.rate() == pytest.approx(100 / 212)


@pytest.mark.parametrize("name", ["conv-k7-r1/2", "conv-k7-r3/4", "ldpc-648-r1/2"])
def test_noiseless_round_trip_through_the_factory(name):
    code = qs.make_code(name, qs.CodeOptions(conv_info_bits=200))
    info = qs.RandomStream(2, 0, qs.Substream.payload).fill_bits(code.info_bits)
    coded = code.encode(info)
    llr = np.where(coded == 0, 4.0, -4.0).astype(np.float32)  # positive LLR favours bit 0
    bits, report = code.make_decoder().decode(llr)
    np.testing.assert_array_equal(bits, info)
    assert report.codeword_valid
    with pytest.raises(ValueError, match="coded_bits"):
        code.make_decoder().decode(llr[:-1])


def test_ldpc_codewords_satisfy_every_parity_check():
    proto = qs.ieee80211_ldpc_prototype(648, 1, 2)
    code = qs.LdpcCode("ldpc-648-r1/2", proto)
    h = code.parity_check
    dense = np.zeros((h.rows, h.cols), np.uint8)
    for r in range(h.rows):
        dense[r, h.row(r)] = 1
    info = qs.RandomStream(3, 0, qs.Substream.payload).fill_bits(code.info_bits)
    cw = code.encode(info)
    assert not np.any(dense.astype(int) @ cw.astype(int) % 2)
    assert h.syndrome_weight(cw) == 0
    dec = code.make_ldpc_decoder()
    word, rep = dec.decode_codeword(np.where(cw == 0, 3.0, -3.0).astype(np.float32))
    np.testing.assert_array_equal(word, cw)
    assert dec.posterior.shape == (648,) and rep.codeword_valid
    names = [c.name for c in qs.code_names()]
    assert "conv-k7-r1/2" in names
