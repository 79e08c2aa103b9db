"""qamsight PRBS bindings against an independent NumPy LFSR of the ITU-T O.150 polynomials."""
import numpy as np
import pytest

import qamsight as qs

pytestmark = pytest.mark.skipif("prbs" not in qs._core._parts, reason="prbs bindings not built")


def lfsr(degree, tap, n):
    """Fibonacci LFSR of x^degree + x^tap + 1 from the all-ones state (ITU-T O.150 clause 5:
    PRBS-9 x^9 + x^5 + 1, PRBS-15 x^15 + x^14 + 1), output = the feedback bit."""
    state = [1] * degree
    out = np.empty(n, dtype=np.uint8)
    for i in range(n):
        b = state[degree - 1] ^ state[tap - 1]
        out[i] = b
        state = [b] + state[:-1]
    return out


def test_period_and_definitions_are_o150():
    # ITU-T O.150: PRBS-9 x^9 + x^5 + 1 (not inverted), PRBS-15 x^15 + x^14 + 1 (inverted).
    d9 = qs.prbs_definition(qs.PrbsPolynomial.prbs9)
    assert (d9.degree, d9.tap, d9.o150_inverted) == (9, 5, False)
    d15 = qs.prbs_definition(qs.PrbsPolynomial.prbs15)
    assert (d15.degree, d15.tap, d15.o150_inverted) == (15, 14, True)
    assert qs.prbs_period(qs.PrbsPolynomial.prbs9) == 2**9 - 1


def test_prbs9_generator_is_a_maximal_lfsr_sequence():
    g = qs.PrbsGenerator(qs.PrbsPolynomial.prbs9, qs.PrbsPolarity.non_inverted)
    bits = g.fill(2 * 511)
    assert bits.dtype == np.uint8 and set(np.unique(bits)) <= {0, 1}
    # Maximal length: period 511, 256 ones per period (any m-sequence of degree 9).
    assert np.array_equal(bits[:511], bits[511:])
    assert int(bits[:511].sum()) == 256
    # The same recurrence as the independent LFSR: b[n] = b[n-9] xor b[n-5] (x^9 + x^5 + 1).
    # Same all-ones start as the independent register: identical bits, not just a shift.
    assert np.array_equal(bits, lfsr(9, 5, 1022))
    b = bits.astype(int)
    assert np.all(b[9:] == b[:-9] ^ b[4:-5])


def test_prbs15_o150_polarity_is_the_inverted_register_output():
    bits = qs.PrbsGenerator(qs.PrbsPolynomial.prbs15).fill(3000)
    assert np.array_equal(bits, 1 - lfsr(15, 14, 3000))


def test_fill_in_place_uses_the_given_buffer():
    g = qs.PrbsGenerator(qs.PrbsPolynomial.prbs15)
    buf = np.zeros(1000, dtype=np.uint8)
    got = g.fill(buf)
    assert got is buf or np.shares_memory(got, buf)
    assert buf.any()
    with pytest.raises(TypeError, match="uint8"):
        g.fill(np.zeros(10, dtype=np.int32))


def test_checker_locks_counts_errors_and_bits():
    g = qs.PrbsGenerator(qs.PrbsPolynomial.prbs15)
    bits = g.fill(20_000)
    errs = np.zeros_like(bits)
    errs[5000::1000] = 1          # 15 single-bit errors after lock
    chk = qs.PrbsChecker(qs.PrbsCheckerConfig(polynomial=qs.PrbsPolynomial.prbs15))
    chk.process(bits ^ errs)
    c = chk.counts
    assert chk.locked() and c.acquisitions == 1 and c.sync_losses == 0
    # Locked, the register runs free, so each line error counts once (15 injected).
    assert c.errors == 15
    assert c.bits == c.received - 15  # all bits from index n = 15 on are compared
