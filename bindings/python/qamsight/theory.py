"""Closed-form and numerically integrated AWGN references (qamsight::theory).

Pure functions in double precision. Every numeric argument may be a scalar or a NumPy array
(broadcast together); scalars give a float, arrays a float64 array. SNRs are in dB and carry
their kind in the argument name (eb_n0_db, es_n0_db); Eb counts information bits.
"""

from ._core import theory as _theory

q_function = _theory.q_function
q_inverse = _theory.q_inverse
es_n0_db_from_eb_n0_db = _theory.es_n0_db_from_eb_n0_db
eb_n0_db_from_es_n0_db = _theory.eb_n0_db_from_es_n0_db
ber_bpsk = _theory.ber_bpsk
ber_square_qam = _theory.ber_square_qam
ser_square_qam = _theory.ser_square_qam
ser_psk = _theory.ser_psk
ber_psk_gray = _theory.ber_psk_gray
ber_for = _theory.ber_for
ser_for = _theory.ser_for
has_reference = _theory.has_reference
shannon_capacity = _theory.shannon_capacity
shannon_min_eb_n0_db = _theory.shannon_min_eb_n0_db
required_eb_n0_db = _theory.required_eb_n0_db
required_eb_n0_db_for_ser = _theory.required_eb_n0_db_for_ser

__all__ = [
    "q_function",
    "q_inverse",
    "es_n0_db_from_eb_n0_db",
    "eb_n0_db_from_es_n0_db",
    "ber_bpsk",
    "ber_square_qam",
    "ser_square_qam",
    "ser_psk",
    "ber_psk_gray",
    "ber_for",
    "ser_for",
    "has_reference",
    "shannon_capacity",
    "shannon_min_eb_n0_db",
    "required_eb_n0_db",
    "required_eb_n0_db_for_ser",
]
