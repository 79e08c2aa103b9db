"""qamsight: simulation and measurement of digital radio links, from Python.

A thin front end over the qamsight C++ library (the compiled module ``qamsight._core``): the
same operations, names and units as the C++ API and the ``qamsight`` command line, and no
logic of its own. The main entry points::

    import qamsight as qs
    result = qs.sweep(["qpsk", "16qam"], eb_n0_db=[4, 6, 8], min_errors=200, seed=21)
    print(result.to_dict()["points"][0]["ber"])      # the CLI's JSON, same counts per seed
    report = qs.check_against_theory(result)          # the regression gate (qamsight check)
    assert report.passed

Arrays
    Samples are complex64, LLRs float32, labels uint32 and bits uint8 (one bit per element).
    An input is used in place, without a copy, exactly when it is already a C-contiguous
    NumPy array of that dtype in native byte order. Any other array-like of a suitable kind
    (a list, complex128 samples, a strided slice, float64 LLRs, int64 labels) is first
    converted to a temporary copy; values of the wrong kind (floats as labels, complex as
    LLRs, strings) raise TypeError. Results are new NumPy arrays filled in place by the C++
    code, or the ``out=`` array when one is given: it must be a writeable C-contiguous array
    of the exact dtype and shape, is filled in place and returned itself (no copy).
    Constellation.points / points_f are read-only views of the C++ tables (no copy).

Threads and the GIL
    Array kernels and sweeps release the GIL while the C++ code runs, so other Python threads
    proceed. Objects with state (RandomStream, EvmAccumulator, ...) must not be used from two
    threads at once. A sweep's counts depend only on the seed, never on ``threads``.

User stages
    ``sweep(..., stage=fn, stage_output="symbols" | "llrs" | "bits")`` calls ``fn(inp)`` for
    every frame with a StageInput whose ``samples``/``symbols`` (read-only) and ``output``
    (writeable) arrays are views of the engine's frame buffers: no copies, valid only during
    the call (keeping a reference stops the sweep with RuntimeError; copy with numpy.array).
    The returned array must have the output's dtype kind and length; returning ``inp.output``
    after filling it avoids the one copy of the result into the engine. Calls are serialised
    and take the GIL; an exception raised by ``fn`` stops the sweep and is re-raised by
    sweep() unchanged.

Errors
    Configuration values out of range raise ConfigError and unreadable files InputError, both
    subclasses of ValueError carrying the C++ message ("<parameter> = <value> is not allowed;
    allowed: <range>").
"""

from . import _core
from . import theory
from ._core import (
    AmplifierKind,
    AwgnChannel,
    AwgnConfig,
    ConfigError,
    Constellation,
    ConstellationFamily,
    ErrorCounts,
    EvmAccumulator,
    GateConfig,
    GateReport,
    GateRow,
    ImpairmentConfig,
    ImplementationLoss,
    InputError,
    Interval,
    LinkConfig,
    PointResult,
    PointSpec,
    PulseShapingConfig,
    RandomStream,
    SnrKind,
    StageInput,
    StageOutputKind,
    StopRule,
    Substream,
    SweepConfig,
    SweepResult,
    SymbolCapture,
    TrackerMode,
    batch_frames,
    binomial_test_p_value,
    box_muller,
    box_muller_f32,
    capture_symbols,
    check_against_baseline,
    check_against_theory,
    clopper_pearson,
    db_to_linear,
    eb_n0_at_ber,
    format_number,
    frame_stream,
    gate_junit_xml,
    gray_decode,
    gray_encode,
    holm_reject,
    information_bits_per_symbol,
    isi_loss_db,
    linear_to_db,
    load_sweep_json,
    modulation_display_name,
    philox4x32,
    point_stream_key,
    rate_increase_p_value,
    read_text_file,
    run_sweep,
    sweep,
    sweep_from_json,
    sweep_points,
    sweep_to_csv,
    sweep_to_json,
    theory_svg,
    validate,
    version,
    waterfall_svg,
    write_text_file_atomic,
)

__version__ = version()

__all__ = [
    "AmplifierKind",
    "AwgnChannel",
    "AwgnConfig",
    "ConfigError",
    "Constellation",
    "ConstellationFamily",
    "ErrorCounts",
    "EvmAccumulator",
    "GateConfig",
    "GateReport",
    "GateRow",
    "ImpairmentConfig",
    "ImplementationLoss",
    "InputError",
    "Interval",
    "LinkConfig",
    "PointResult",
    "PointSpec",
    "PulseShapingConfig",
    "RandomStream",
    "SnrKind",
    "StageInput",
    "StageOutputKind",
    "StopRule",
    "Substream",
    "SweepConfig",
    "SweepResult",
    "SymbolCapture",
    "TrackerMode",
    "batch_frames",
    "binomial_test_p_value",
    "box_muller",
    "box_muller_f32",
    "capture_symbols",
    "check_against_baseline",
    "check_against_theory",
    "clopper_pearson",
    "db_to_linear",
    "eb_n0_at_ber",
    "format_number",
    "frame_stream",
    "gate_junit_xml",
    "gray_decode",
    "gray_encode",
    "holm_reject",
    "information_bits_per_symbol",
    "isi_loss_db",
    "linear_to_db",
    "load_sweep_json",
    "modulation_display_name",
    "philox4x32",
    "point_stream_key",
    "rate_increase_p_value",
    "read_text_file",
    "run_sweep",
    "sweep",
    "sweep_from_json",
    "sweep_points",
    "sweep_to_csv",
    "sweep_to_json",
    "theory",
    "theory_svg",
    "validate",
    "version",
    "waterfall_svg",
    "write_text_file_atomic",
]

# Modules built by their own init files; a build may leave one out (QAMSIGHT_EXCLUDE), and then
# its names are absent here too. _core._parts lists what the extension carries.
_OPTIONAL = {
    "impairments": [
        "AmplifierMeter", "ClipMode", "DcOffset", "DcOffsetConfig", "FrequencyOffset", "FrequencyOffsetConfig",
        "IqImbalance", "IqImbalanceConfig", "MaskExtension", "MaskPhaseNoise", "MaskPhaseNoiseConfig",
        "MultipathChannel", "MultipathConfig", "MultipathTap", "PhaseNoiseMask", "PhaseNoisePoint", "PhaseRotation",
        "PhaseRotationConfig", "Quantiser", "QuantiserConfig", "RappAmplifier", "RappConfig", "SalehAmplifier",
        "SalehConfig", "WienerPhaseNoise", "WienerPhaseNoiseConfig",
    ],
    "pulse": [
        "FirFilter", "FirFilterD", "FirMethod", "MatchedDecimator", "MatchedDecimatorD", "OVERLAP_SAVE_MIN_COMPLEX_TAPS",
        "OVERLAP_SAVE_MIN_TAPS", "PolyphaseInterpolator", "PolyphaseInterpolatorD", "PulseFamily", "PulseSpec",
        "check_pulse_spec", "matched_cascade_isi_power", "pulse_tap_count", "pulse_taps", "raised_cosine_pulse",
        "raised_cosine_spectrum", "root_raised_cosine_pulse",
    ],
    "spectrum": [
        "AdjacentChannelPower", "AdjacentChannels", "MaskPoint", "MaskReference", "MaskVerdict", "OccupiedBandwidth",
        "SpectralMask", "SpectralPeak", "Spectrum", "SpectrumScaling", "WelchConfig", "WelchEstimator", "WindowKind",
        "WindowProperties", "adjacent_channel_power", "band_power", "mask_check", "mask_limit_db",
        "occupied_bandwidth", "spectral_peak", "total_power", "window_coefficients", "window_display_name",
        "window_from_name", "window_name", "window_properties",
    ],
    "views": ["ConstellationDensity", "ConstellationDensityConfig", "EyeComponent", "EyeConfig", "EyeDiagram"],
    "llr": ["LLR_LIMIT", "LlrDemapper", "LlrMethod", "llr_exhaustive"],
    "information": [
        "GAUSS_HERMITE_NODES_1D", "GAUSS_HERMITE_NODES_2D", "GMI_STREAM_BASE", "GaussHermiteRule", "GmiAccumulator",
        "GmiEstimate", "InformationRates", "bicm_capacity", "bicm_threshold_es_n0_db", "cm_capacity",
        "cm_threshold_es_n0_db", "gauss_hermite_rule", "gmi_monte_carlo", "information_rates",
    ],
    "fec": [
        "Code", "CodeNameInfo", "CodeOptions", "ConvRate", "ConvolutionalCode", "ConvolutionalCodeConfig",
        "DecodeReport", "Decoder", "LDPC_MAX_DENSE_CODEWORD_BITS", "LDPC_MAX_LIFTING", "LdpcCode", "LdpcDecoder",
        "LdpcDecoderConfig", "LdpcEncoderKind", "LdpcPrototype", "MinSumRule", "ParityCheckMatrix", "ViterbiDecoder",
        "code_names", "ieee80211_ldpc_prototype", "make_code",
    ],
    "link": [
        "AntennaKind", "AntennaSpec", "ArrayLattice", "BOLTZMANN_J_PER_K", "BudgetLine", "CircularPass",
        "DEFAULT_SCAN_LOSS_EXPONENT", "EARTH_GRAVITATIONAL_PARAMETER_KM3_PER_S2", "EARTH_RADIUS_KM", "LinkAnalysis",
        "LinkBudget", "LinkScenario", "LossScaling", "Modcod", "ModcodChoice", "ModcodMargin", "ModcodTable",
        "PassHalf", "PassPoint", "PassState", "PathLosses", "PlanarArray", "PlanarArrayConfig", "Platform",
        "REFERENCE_NOISE_TEMPERATURE_K", "ReceiverSpec", "SPEED_OF_LIGHT_M_PER_S", "SideLobe", "TRANSMIT_POWER_CAUTION",
        "TransmitterSpec", "analyse_link", "array_eirp_dbw", "array_gain_dbi", "boltzmann_dbw_per_k_hz",
        "carrier_to_noise_density_dbhz", "compute_budget", "cosine_scan_loss_db", "doppler_shift_hz",
        "earth_central_angle_deg", "elevation_from_central_angle_deg", "es_n0_db_from_c_n0",
        "free_space_loss_constant_ghz_km_db", "free_space_loss_constant_mhz_km_db", "free_space_path_loss_db",
        "free_space_path_loss_db_mhz_km", "g_over_t_db_k", "link_analysis_to_json", "link_es_n0_svg",
        "link_throughput_svg", "load_link_scenario", "nadir_angle_deg", "noise_temperature_from_figure_k",
        "occupied_bandwidth_hz", "orbital_angular_rate_rad_per_s", "orbital_period_s", "overhead_pass_range_rate_m_s",
        "parse_link_scenario", "propagation_delay_s", "select_modcod", "shannon_min_es_n0_db", "slant_range_km",
        "system_noise_temperature_k", "zenith_facing_scan_deg",
    ],
    "evm": ["CarrierFit", "EvmMeasurement", "EvmNormalisation", "EvmOptions", "evm_db_to_pct", "evm_pct_to_db",
            "fit_carrier", "measure_evm"],
    "prbs": ["PrbsChecker", "PrbsCheckerConfig", "PrbsCounts", "PrbsDefinition", "PrbsGenerator", "PrbsPolarity",
             "PrbsPolynomial", "prbs_definition", "prbs_from_degree", "prbs_inverted", "prbs_period"],
    "sigmf": ["IqDatatype", "IqNumber", "RawIqSpec", "Recording", "RecordingReadOptions", "SigmfAnnotation",
              "SigmfCapture", "SigmfWriteSpec", "SigmfWriter", "decode_iq", "encode_iq", "iq_datatype_names",
              "parse_iq_datatype", "read_raw_iq", "read_sigmf", "sigmf_data_path", "sigmf_meta_path", "write_sigmf"],
    "evm_budget": [
        "EvmAllowance", "EvmAllowanceKind", "EvmBudgetReport", "EvmContribution", "EvmLimit", "EvmLimitRow",
        "EvmLimitTable", "EvmLineup", "EvmLineupFile", "EvmPrediction", "EvmRequirement", "EvmSimulation",
        "EvmSimulationSetup", "EvmVerdict", "LimitProvenance", "ReceiverNoiseSpec", "evm_budget_json",
        "evm_budget_svg", "evm_limit_from_table", "evm_limit_table", "evm_limit_tables", "evm_limit_tables_markdown",
        "evm_simulation_setup", "evm_verdict", "lineup_es_n0_db", "lineup_from_link", "load_evm_lineup",
        "parse_evm_limit", "parse_evm_lineup", "predict_evm", "provenance_name", "simulate_evm",
        "solve_evm_allowance",
    ],
    "sync": ["PhaseDetector", "PhaseLoopGains", "PhaseTracker", "PhaseTrackerConfig", "phase_loop_gains", "soft_symbol"],
    "waveform": [
        "CaptureFrame", "CaptureMeasurement", "CaptureReceiver", "CaptureRxConfig", "CaptureStatus", "FrameFormat",
        "ImpairmentChain",
        "PREAMBLE_SYMBOLS", "RecordingFileSpec", "RecordingWriteReport", "WaveformDescription", "WaveformGenerator",
        "WaveformSpec", "capture_status_name", "preamble_detection_threshold", "preamble_symbols",
        "waveform_description", "write_waveform_recording",
    ],
}

for _part, _names in _OPTIONAL.items():
    if _part in _core._parts:
        globals().update({_n: getattr(_core, _n) for _n in _names})
        __all__ += _names
del _part, _names
