"""qamsight waveform and capture-receiver bindings: a generated recording, read back and analysed."""
import math

import numpy as np
import pytest
from scipy import stats

import qamsight as qs

pytestmark = pytest.mark.skipif("waveform" not in qs._core._parts, reason="waveform bindings not built")

FRAME = dict(payload_symbols=1792)  # frames of 2048 symbols


def spec(**kw):
    s = qs.WaveformSpec(modulation="qpsk", es_n0_db=20.0, symbols=4 * 2048, seed=9, **kw)
    s.frame = qs.FrameFormat(**FRAME)
    return s


def rx_config(mod="qpsk"):
    c = qs.CaptureRxConfig(modulation=mod, symbol_rate_hz=1e6, roll_off=0.25)
    c.frame = qs.FrameFormat(**FRAME)
    return c


def test_recording_roundtrip_and_data_aided_analysis(tmp_path):
    name = str(tmp_path / "rec")
    rep = qs.write_waveform_recording(spec(), name)
    assert rep.samples > 0 and rep.clipped_components == 0
    rec = qs.read_sigmf(name)
    desc = qs.waveform_description(rec)
    assert desc.modulation == "qpsk" and desc.samples_per_symbol == 4 and desc.frame.payload_symbols == 1792
    samples = rec.samples  # read-only view: analyse reads it in place (complex64, contiguous)
    rx = qs.CaptureReceiver(rx_config(), rec.sample_rate_hz)
    m = rx.analyse(samples)
    assert m.status == qs.CaptureStatus.measured, m.message
    assert len(m.frames) == 4 and m.prbs_checked and m.prbs_locked
    # QPSK at Es/N0 = 20 dB: BER = Q(sqrt(2 * 100 / 2)) = Q(10) ~ 7.6e-24 (Proakis): no errors.
    assert m.prbs.errors == 0 and m.prbs.bits > 4 * 1792 * 2 * 0.9
    # Data-aided EVM ~ 1/sqrt(Es/N0) = 10 %: the estimate (~14000 symbols) has a 99.9 % spread
    # of about 1.4 % relative; the receiver's own estimation losses are allowed another 3 %.
    ev = qs.measure_evm(m.received, m.reference, qs.Constellation.from_name("qpsk"))
    assert ev.rms_pct == pytest.approx(10.0, rel=0.045)
    assert m.received.dtype == np.complex64 and not m.received.flags.writeable
    assert m.reference_known.dtype == np.uint8 and m.frame_index.dtype == np.uint32


def test_generator_samples_equal_the_written_file(tmp_path):
    g = qs.WaveformGenerator(spec())
    x = g.samples()
    assert x.dtype == np.complex64 and len(x) == g.total_samples
    name = str(tmp_path / "rec")
    qs.write_waveform_recording(spec(), name)
    np.testing.assert_array_equal(qs.read_sigmf(name).samples, x)
    assert np.array_equal(g.samples(), x)  # deterministic for a spec and seed


def test_carrier_offset_is_measured_and_blind_mode_runs():
    s = spec()
    s.impairments = qs.ImpairmentConfig(symbol_rate_hz=1e6, cfo_hz=3000.0)
    g = qs.WaveformGenerator(s)
    x = g.samples()
    rx = qs.CaptureReceiver(rx_config(), g.sample_rate_hz)
    m = rx.analyse(x)
    assert m.status == qs.CaptureStatus.measured
    # 3 kHz of a 1 MBd signal; the preamble fit plus the tracker's refinement resolve it far
    # better than 1 % (common practice for data-aided estimators over ~8000 symbols).
    assert m.cfo_hz == pytest.approx(3000.0, abs=30.0)
    b = rx.analyse_blind(x)
    assert b.blind and b.status == qs.CaptureStatus.measured
    assert b.cfo_hz == pytest.approx(3000.0, abs=100.0)


def test_noise_only_gives_no_preamble_not_an_exception():
    x = qs.RandomStream(1, 0, qs.Substream.awgn).fill_complex_gaussian(50_000, 1.0)
    m = qs.CaptureReceiver(rx_config(), 4e6).analyse(x)
    assert m.status == qs.CaptureStatus.no_preamble and len(m.frames) == 0


def test_waveform_errors_are_value_errors_naming_the_field():
    with pytest.raises(ValueError, match="es_n0_db"):
        qs.WaveformGenerator(qs.WaveformSpec(es_n0_db=500.0))
    with pytest.raises(ValueError, match="roll_off"):
        qs.CaptureReceiver(qs.CaptureRxConfig(roll_off=1.5), 4e6)
    with pytest.raises(TypeError, match="complex64"):
        qs.CaptureReceiver(rx_config(), 4e6).analyse(np.array(["a"]))
    # The preamble metric of white noise is Beta(S, N - S) with S = 16 segments, N = 256
    # (capture_rx.hpp); the threshold is its upper quantile: SciPy's beta.isf.
    from scipy import stats
    for pfa in (1e-10, 1e-4):
        assert math.isclose(qs.preamble_detection_threshold(pfa), stats.beta(16, 240).isf(pfa), rel_tol=1e-8)


def test_impairment_chain_frequency_offset_and_rotation_in_closed_form():
    # CFO f and rotation phi: y[n] = x[n] exp(j (2 pi f n / fs + phi)) (channel.hpp), evaluated in
    # NumPy float64; the chain's float32 output agrees to float rounding, and cutting the input
    # into two calls gives the same samples (the phase carries across calls).
    fs = 4e6
    cfg = qs.ImpairmentConfig(symbol_rate_hz=1e6, cfo_hz=1234.5, phase_deg=30.0)
    rng = np.random.default_rng(3)
    x = (rng.standard_normal(5000) + 1j * rng.standard_normal(5000)).astype(np.complex64)
    n = np.arange(len(x))
    ref = x * np.exp(1j * (2 * np.pi * 1234.5 * n / fs + np.deg2rad(30.0)))
    chain = qs.ImpairmentChain(cfg, fs, 0.25)
    assert not chain.empty
    y = chain.process(qs.RandomStream(1, 0, qs.Substream.phase_noise), x)
    assert y is not x and y.dtype == np.complex64
    assert np.max(np.abs(y - ref)) < 1e-5 * np.max(np.abs(x))
    chain.reset()
    rs = qs.RandomStream(1, 0, qs.Substream.phase_noise)
    a = x.copy()
    chain.process(rs, a[:1234], out=a[:1234])
    chain.process(rs, a[1234:], out=a[1234:])
    assert np.array_equal(a, y)


def test_impairment_chain_wiener_phase_noise_keeps_the_amplitude_and_has_the_right_spread():
    # Wiener phase noise only: |y| = |x|; the phase increments of y / x have variance
    # 2 pi linewidth / fs (channel.hpp, Wiener model), checked with a chi-square 99.9% band.
    fs, lw = 1e6, 500.0
    chain = qs.ImpairmentChain(qs.ImpairmentConfig(symbol_rate_hz=fs, phase_noise_linewidth_hz=lw), fs)
    x = np.ones(200001, np.complex64)
    y = chain.process(qs.RandomStream(2, 0, qs.Substream.phase_noise), x)
    assert np.allclose(np.abs(y), 1.0, atol=1e-5)
    d = np.diff(np.unwrap(np.angle(y.astype(np.complex128))))
    var = 2 * np.pi * lw / fs
    k = len(d)
    lo, hi = stats.chi2.ppf([0.0005, 0.9995], k) / k
    assert lo * var <= np.mean(d**2) <= hi * var
    assert qs.ImpairmentChain(qs.ImpairmentConfig(), fs).empty


def test_impairment_chain_rejects_a_bad_setting_with_its_name():
    with pytest.raises(ValueError, match="offset_hz"):
        qs.ImpairmentChain(qs.ImpairmentConfig(symbol_rate_hz=1e6, cfo_hz=3e6), 4e6)
