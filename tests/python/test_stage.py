"""User receiver stages in Python: zero-copy inputs, outputs of three kinds, errors, threads."""
import numpy as np
import pytest
from scipy import stats

import qamsight as qs
from conftest import counts_of

KW = dict(eb_n0_db=[4.0, 7.0], min_errors=300, max_bits=2e6, seed=21, frame_symbols=2048)


def test_pass_through_stage_gives_the_cli_counts(cli):
    doc, _ = cli.sweep_json("--mod", "16qam", "--ebn0", "4,7", "--min-errors", "300", "--max-bits", "2e6",
                            "--seed", "21", "--frame-symbols", "2048")
    res = qs.sweep("16qam", stage=lambda inp: inp.symbols, **KW)
    assert counts_of(res.points) == counts_of(doc["points"])


def test_stage_input_is_a_zero_copy_view():
    seen = []

    def stage(inp):
        s = inp.samples
        seen.append(dict(frame=inp.frame, owndata=s.flags.owndata, writeable=s.flags.writeable,
                         base=s.base is not None, dtype=s.dtype, n=len(s), sps=inp.samples_per_symbol,
                         n0=inp.noise_variance, name=inp.constellation.name, kind=inp.output_kind,
                         same=s.__array_interface__["data"][0] == inp.symbols.__array_interface__["data"][0],
                         out_writeable=inp.output.flags.writeable, out_owndata=inp.output.flags.owndata,
                         out_dtype=inp.output.dtype))
        return inp.symbols

    res = qs.sweep("qpsk", eb_n0_db=6.0, max_bits=40_000, frame_symbols=1000, threads=2, stage=stage)
    assert len(seen) == res.points[0].frames
    assert sorted(d["frame"] for d in seen) == list(range(len(seen)))
    # Es/N0 = 6 dB + 10 log10 2 for QPSK; N0 = 1 / (Es/N0) at unit symbol energy (channel.hpp).
    n0 = 10 ** (-(6.0 + 10 * np.log10(2)) / 10)
    for d in seen:
        assert d["owndata"] is False and d["writeable"] is False and d["base"] and d["same"]
        assert d["dtype"] == np.complex64 and d["n"] == 1000 and d["sps"] == 1 and d["name"] == "qpsk"
        assert d["n0"] == pytest.approx(n0, rel=1e-12) and d["kind"] == qs.StageOutputKind.symbols
        assert d["out_writeable"] and d["out_owndata"] is False and d["out_dtype"] == np.complex64


def test_stage_output_is_what_gets_counted():
    # Negating QPSK symbols flips both Gray bits of every decision, so each bit that was right
    # is now wrong and vice versa: errors' = bits - errors, exactly.
    ref = qs.sweep("qpsk", eb_n0_db=3.0, max_bits=100_000, min_errors=10**9, seed=3)
    neg = qs.sweep("qpsk", eb_n0_db=3.0, max_bits=100_000, min_errors=10**9, seed=3, stage=lambda inp: -inp.symbols)
    assert neg.points[0].bits == ref.points[0].bits
    assert neg.points[0].bit_errors == ref.points[0].bits - ref.points[0].bit_errors


def test_llr_stage_bpsk_closed_form_equals_the_built_in_slicer():
    # llr.hpp: BPSK (label 0 at -1) LLR = ln P(b=0)/P(b=1) = -4 Re(y) / N0; its signs are the
    # built-in decisions, so the counts must be identical.
    def llrs(inp):
        return (-4.0 * inp.symbols.real / inp.noise_variance).astype(np.float32)

    ref = qs.sweep("bpsk", **KW)
    res = qs.sweep("bpsk", stage=llrs, stage_output="llrs", **KW)
    assert counts_of(res.points) == counts_of(ref.points)


def test_bits_stage_qpsk_in_place_output_equals_the_built_in_slicer():
    # QPSK label bits, MSB first: bit 0 from the in-phase sign, bit 1 from the quadrature sign
    # (level index 1 = non-negative amplitude carries Gray bit 1; modem.hpp slicing rule).
    def bits(inp):
        out = inp.output
        out[0::2] = inp.symbols.real >= 0
        out[1::2] = inp.symbols.imag >= 0
        return out

    ref = qs.sweep("qpsk", **KW)
    res = qs.sweep("qpsk", stage=bits, stage_output=qs.StageOutputKind.bits, **KW)
    assert counts_of(res.points) == counts_of(ref.points)


def test_stage_counts_do_not_depend_on_threads():
    def stage(inp):
        # A frame-keyed random perturbation: reproducible because it depends on inp.frame only.
        rs = qs.RandomStream(99, inp.frame, qs.Substream.user)
        return inp.symbols + rs.fill_complex_gaussian(len(inp.symbols), 0.05)

    a = qs.sweep("16qam", stage=stage, threads=1, **KW)
    b = qs.sweep("16qam", stage=stage, threads=2, **KW)
    assert counts_of(a.points) == counts_of(b.points)


def test_exception_in_stage_propagates_unchanged_and_stops_the_sweep():
    class Broken(Exception):
        pass

    err = Broken("frame 5 is bad")
    calls = []

    def stage(inp):
        calls.append(inp.frame)
        if inp.frame == 5:
            raise err
        return inp.symbols

    with pytest.raises(Broken) as info:
        qs.sweep("qpsk", eb_n0_db=4.0, max_bits=1e9, min_errors=10**9, threads=2, stage=stage)
    assert info.value is err and info.value.__traceback__ is not None
    # Stopped at the first batch boundary after the failure: batches are 4, 8, ... frames.
    assert max(calls) < 12 and calls.count(5) == 1


def test_the_lowest_failing_frame_is_reported_for_any_thread_count():
    # Every frame from 1 on fails; which one Python sees must not depend on the threads' race.
    def stage(inp):
        if inp.frame >= 1:
            raise RuntimeError(f"frame {inp.frame}")
        return inp.symbols

    for threads in (1, 2, 3):
        for _ in range(10):
            with pytest.raises(RuntimeError, match=r"^frame 1$"):
                qs.sweep("qpsk", eb_n0_db=4.0, max_bits=1e9, min_errors=10**9, threads=threads, stage=stage)


@pytest.mark.parametrize("ret,kind,needle", [
    (lambda inp: inp.symbols[:10], "symbols", "one-dimensional complex64 array of 2048 values; got complex64 "
                                               "array of shape (10,)"),
    (lambda inp: None, "symbols", "got None"),
    (lambda inp: "abc", "symbols", "got <U3"),
    (lambda inp: inp.symbols.reshape(2, -1), "symbols", "shape (2, 1024)"),
    (lambda inp: inp.symbols, "llrs", "output 'llrs' of frame 0 must be a one-dimensional float32 array of 4096"),
    (lambda inp: np.zeros(4096, np.float32), "bits", "uint8 array of 4096 values; got float32"),
])
def test_wrong_stage_output_raises_value_error(ret, kind, needle):
    with pytest.raises(ValueError) as info:
        qs.sweep("qpsk", eb_n0_db=4.0, frame_symbols=2048, max_bits=1e6, stage=ret, stage_output=kind)
    assert needle in str(info.value) and f"output '{kind}'" in str(info.value)


def test_acceptable_kinds_are_converted():
    # complex128 symbols and float64 LLRs are cast (one copy), like any other input.
    ref = qs.sweep("bpsk", **KW)
    res = qs.sweep("bpsk", stage=lambda inp: -4.0 * inp.symbols.real.astype(np.float64) / inp.noise_variance,
                   stage_output="llrs", **KW)
    assert counts_of(res.points) == counts_of(ref.points)
    res = qs.sweep("bpsk", stage=lambda inp: inp.symbols.astype(np.complex128), **KW)
    assert counts_of(res.points) == counts_of(ref.points)


def test_keeping_the_views_is_refused():
    kept = []

    def stage(inp):
        kept.append(inp.samples[:4])
        return inp.symbols

    with pytest.raises(RuntimeError, match="kept a reference"):
        qs.sweep("qpsk", eb_n0_db=4.0, max_bits=1e6, stage=stage)

    def keeps_a_copy(inp):
        kept.append(np.array(inp.samples[:4]))
        return inp.symbols

    qs.sweep("qpsk", eb_n0_db=4.0, max_bits=1e5, stage=keeps_a_copy)


def test_stage_must_be_callable():
    with pytest.raises(TypeError, match="callable"):
        qs.sweep("qpsk", eb_n0_db=4.0, stage=42)


def test_coded_sweep_with_a_numpy_demapper_stage():
    # A custom QPSK demapper in front of the decoder: Gray QPSK (bit 0 at -1/sqrt 2 on each axis)
    # has the exact LLR ln P(0)/P(1) = -2 sqrt(2) y / N0 per component (binary antipodal
    # signalling in Gaussian noise of variance N0/2 per dimension). The Viterbi decoder is
    # scale-invariant, so the coded counts must sit inside the built-in receiver's 99.9%
    # interval; raw symbol decisions are the same signs, so symbol errors are equal. Hard bits
    # decode much worse than soft LLRs (the soft-decision gain, about 2 dB: common practice).
    kw = dict(eb_n0_db=2.5, code="conv-k7-r1/2", max_bits=4e5, min_errors=10**9, seed=5, threads=2)

    def demapper(inp):
        y = np.asarray(inp.symbols)
        llr = np.empty(2 * len(y), np.float32)
        llr[0::2] = -2.0 * np.sqrt(2.0) * y.real / inp.noise_variance
        llr[1::2] = -2.0 * np.sqrt(2.0) * y.imag / inp.noise_variance
        return llr

    def hard(inp):
        y = np.asarray(inp.symbols)
        bits = np.empty(2 * len(y), np.uint8)
        bits[0::2] = y.real > 0
        bits[1::2] = y.imag > 0
        return bits

    ref = qs.sweep("qpsk", **kw).points[0]
    soft = qs.sweep("qpsk", stage=demapper, stage_output="llrs", **kw).points[0]
    hd = qs.sweep("qpsk", stage=hard, stage_output="bits", **kw).points[0]
    assert ref.bit_errors > 50
    assert soft.bits == ref.bits and soft.symbol_errors == ref.symbol_errors
    # exact 99.9% Clopper-Pearson interval of the built-in BER (scipy.stats.beta quantiles)
    lo = stats.beta.ppf(0.0005, ref.bit_errors, ref.bits - ref.bit_errors + 1)
    hi = stats.beta.ppf(0.9995, ref.bit_errors + 1, ref.bits - ref.bit_errors)
    assert lo <= soft.bit_errors / soft.bits <= hi
    assert hd.symbol_errors == ref.symbol_errors
    assert hd.bit_errors > 3 * ref.bit_errors
