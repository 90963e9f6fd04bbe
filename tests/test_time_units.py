import numpy as np
import pytest

from spikevar.base.errors import SpikevarInputError
from spikevar.inputs.time_units import check_plausible_unit, to_seconds


def test_samples_to_seconds_hand_computed_table():
    # Hand-computed: t = n / fs.
    table = [
        (0, 30_000.0, 0.0),
        (1, 30_000.0, 1 / 30_000),
        (30_000, 30_000.0, 1.0),
        (45_000, 30_000.0, 1.5),
        (123_456, 20_000.0, 6.1728),
        (1, 24_414.0625, 4.096e-5),
        (3_600 * 40_000, 40_000.0, 3600.0),
    ]
    raw = np.array([row[0] for row in table], dtype=np.int64)
    for (n, fs, expected) in table:
        got = to_seconds(np.array([n]), time_unit="samples", sampling_rate_hz=fs)[0]
        assert got == pytest.approx(expected, rel=1e-12, abs=1e-15)
    assert raw.dtype == np.int64


@pytest.mark.parametrize("unit,factor", [("s", 1.0), ("ms", 1e-3), ("us", 1e-6)])
def test_plain_units(unit, factor):
    assert to_seconds(np.array([2.5]), time_unit=unit)[0] == pytest.approx(2.5 * factor)


def test_samples_without_rate_is_refused():
    with pytest.raises(SpikevarInputError, match="sampling_rate_hz"):
        to_seconds(np.array([1]), time_unit="samples", sampling_rate_hz=None)


def test_seconds_that_are_really_ms_suggest_ms():
    # a 1-hour recording written in ms but declared in s lasts 41.7 days
    with pytest.raises(SpikevarInputError, match="'ms'") as info:
        check_plausible_unit(span_s=3.6e6, median_isi_s=50.0, time_unit="s")
    assert "days" in str(info.value)


def test_ms_that_are_really_seconds_suggest_s():
    # ISIs of 20 ms written in s and declared in ms become 20 us
    with pytest.raises(SpikevarInputError, match="'s'"):
        check_plausible_unit(span_s=3.6, median_isi_s=20e-6, time_unit="ms")


def test_plausible_data_passes():
    check_plausible_unit(span_s=7200.0, median_isi_s=0.05, time_unit="s")
