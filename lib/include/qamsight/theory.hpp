// theory: closed-form and numerically integrated error rates and capacities (pure, double).
#pragma once

#include <string_view>

namespace qamsight::theory {

/// Gaussian tail Q(x) = 0.5 erfc(x / sqrt 2), accurate in the far tail (no 1 - Phi cancellation).
double q_function(double x);
/// Inverse of Q for 0 < p < 1.
double q_inverse(double p);

/// Eb/N0 <-> Es/N0 in dB: es_n0_db = eb_n0_db + 10 log10(bits_per_symbol * code_rate).
/// The one place where bits per symbol and code rate enter (Eb counts information bits).
double es_n0_db_from_eb_n0_db(double eb_n0_db, double bits_per_symbol, double code_rate = 1.0);
double eb_n0_db_from_es_n0_db(double es_n0_db, double bits_per_symbol, double code_rate = 1.0);

/// BPSK (and Gray QPSK per bit) BER = Q(sqrt(2 Eb/N0)).
double ber_bpsk(double eb_n0_db);

/// Exact BER of Gray-coded square M-QAM in AWGN (M = 4, 16, 64, ...), after
/// K. Cho and D. Yoon, IEEE Trans. Commun. 50(7), 2002. Argument Eb/N0 in dB.
double ber_square_qam(unsigned order, double eb_n0_db);
/// Exact SER of square M-QAM in AWGN: P = 2(1 - 1/sqrt M) Q(sqrt(3 Es/N0/(M-1))),
/// Ps = 2P - P^2 (Proakis, Digital Communications). Argument Es/N0 in dB.
double ser_square_qam(unsigned order, double es_n0_db);

/// Exact SER of M-PSK in AWGN by the Craig integral (J. W. Craig, MILCOM 1991).
double ser_psk(unsigned order, double es_n0_db);
/// Exact BER of Gray-labelled M-PSK (label gray(i) at angle 2 pi i / M): the average over
/// sent symbols of sector probabilities times Hamming distances, divided by log2 M.
double ber_psk_gray(unsigned order, double es_n0_db);

/// Reference curves for a built-in modulation by name (bpsk, qpsk, 8psk, 16qam, ..., 1024qam).
/// Throws ConfigError for names without a closed form.
double ber_for(std::string_view modulation, double eb_n0_db);
double ser_for(std::string_view modulation, double eb_n0_db);
/// True if ber_for/ser_for know the modulation.
bool has_reference(std::string_view modulation);

/// Shannon capacity of the complex AWGN channel, bit per complex dimension: log2(1 + SNR).
double shannon_capacity(double snr_db);
/// Minimum Eb/N0 (dB) for reliable transmission at spectral efficiency eta (bit/s/Hz):
/// 10 log10((2^eta - 1) / eta).
double shannon_min_eb_n0_db(double spectral_efficiency);

/// Eb/N0 (dB) at which ber_for(modulation, .) equals target_ber, by bracketed root finding
/// on log BER. Throws ConfigError if target_ber is outside (1e-300, max BER of the curve).
double required_eb_n0_db(std::string_view modulation, double target_ber);
/// Same for the symbol error rate.
double required_eb_n0_db_for_ser(std::string_view modulation, double target_ser);

}  // namespace qamsight::theory
