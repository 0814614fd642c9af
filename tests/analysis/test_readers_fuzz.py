"""Property tests: readers either return a valid result or raise AnalysisInputError.

Random and malformed text or bytes go into every reader; whatever comes out must be
finite, ascending and of matched lengths, and nothing but AnalysisInputError may escape
(the contract stated in inventory/physics/errors.py).  Derandomized so CI runs are repeatable.
"""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from qc.analysis.errors import AnalysisInputError
from qc.analysis.jcamp import read_jcamp
from qc.analysis.readers import read_map, read_spectrum, read_two_column
from qc.analysis.spectrum import RamanMap, Spectrum
from tests.jcamp_writer import write_jcamp

FUZZ = settings(
    max_examples=150,
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
)

# Characters that matter to the parsers: digits, signs, separators, decimal marks,
# exponents, every ASDF pseudo-digit, comment and label markers, and a few oddities.
_ALPHABET = (
    "0123456789+-.,;\t \n#%$=?@ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrsEe()XY/naif"
)
noisy_text = st.text(alphabet=_ALPHABET, max_size=300)


def _numeric_cell():
    return st.one_of(
        st.floats(allow_nan=True, allow_infinity=True, width=64).map(repr),
        st.integers(-(10**6), 10**6).map(str),
        st.sampled_from(["", "x", "1,5", "1e400", "--1", "nan", "."]),
    )


@st.composite
def table_text(draw):
    """Text that looks like a table: numeric-ish cells, a random delimiter, ragged rows."""
    delimiter = draw(st.sampled_from([",", ";", "\t", " "]))
    rows = draw(st.lists(st.lists(_numeric_cell(), min_size=1, max_size=5), max_size=8))
    header = draw(st.sampled_from(["", "x,y\n", "# comment\n", "x;y;100;200\n"]))
    return header + "\n".join(delimiter.join(r) for r in rows)


@st.composite
def jcamp_text(draw):
    """A valid JCAMP-DX file from the writer, then damaged in a random place."""
    n = draw(st.integers(2, 40))
    y = np.asarray(
        draw(st.lists(st.integers(-5000, 5000), min_size=n, max_size=n)), float
    )
    compression = draw(st.sampled_from(["AFFN", "PAC", "SQZ", "DIF", "DIFDUP"]))
    text = write_jcamp(
        Spectrum(np.linspace(100.0, 100.0 + n, n), y),
        title="f",
        origin="o",
        owner="w",
        compression=compression,
        y_factor=1,
    )
    position = draw(st.integers(0, len(text)))
    cut = draw(st.integers(0, 5))
    insert = draw(st.text(alphabet=_ALPHABET, max_size=4))
    return text[:position] + insert + text[position + cut :]


def _assert_valid_spectrum(spectrum):
    assert isinstance(spectrum, Spectrum)
    assert spectrum.x.shape == spectrum.y.shape and spectrum.x.size >= 2
    assert np.all(np.isfinite(spectrum.x)) and np.all(np.isfinite(spectrum.y))
    assert np.all(np.diff(spectrum.x) > 0)


def _assert_valid_map(raman_map):
    assert isinstance(raman_map, RamanMap)
    assert raman_map.intensity.shape == (raman_map.x_um.size, raman_map.shift_cm1.size)
    assert raman_map.x_um.shape == raman_map.y_um.shape
    assert np.all(np.isfinite(raman_map.intensity))
    assert np.all(np.diff(raman_map.shift_cm1) > 0)


def _only_valid_or_refused(reader, data, check):
    try:
        result = reader(data)
    except AnalysisInputError as error:
        assert error.line is None or error.line >= 1
        return
    check(result)


@FUZZ
@given(st.one_of(noisy_text, table_text()))
def test_two_column_reader(text):
    _only_valid_or_refused(read_two_column, text, _assert_valid_spectrum)


@FUZZ
@given(st.one_of(noisy_text, table_text()))
def test_map_reader(text):
    _only_valid_or_refused(read_map, text, _assert_valid_map)


@FUZZ
@given(
    st.one_of(
        jcamp_text(), noisy_text.map(lambda t: "##TITLE=t\n##JCAMP-DX=4.24\n" + t)
    )
)
def test_jcamp_reader(text):
    _only_valid_or_refused(read_jcamp, text, _assert_valid_spectrum)


@FUZZ
@given(st.binary(max_size=300), st.sampled_from([None, "a.jdx", "a.csv", "a.txt"]))
def test_read_spectrum_on_random_bytes(data, filename):
    _only_valid_or_refused(
        lambda d: read_spectrum(d, filename), data, _assert_valid_spectrum
    )


@FUZZ
@given(jcamp_text())
def test_read_spectrum_on_damaged_jcamp_bytes(text):
    _only_valid_or_refused(
        read_spectrum, text.encode("latin-1"), _assert_valid_spectrum
    )
