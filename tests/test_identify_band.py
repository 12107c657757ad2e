"""The analysis band check (clashcheck.identify.band)."""

from __future__ import annotations

import pytest

from clashcheck.errors import InputError
from clashcheck.identify.band import MAX_SEGMENT_SAMPLES, USABLE_FRACTION, check_band


def test_basic_band_top_is_the_usable_fraction():
    band = check_band(8000.0, 20.0, None, 1.0)
    assert band.high_hz == pytest.approx(USABLE_FRACTION * 8000.0) and band.low_hz == 20.0


def test_edge_finest_resolution_is_accepted():
    check_band(8000.0, 20.0, 1000.0, 8000.0 / MAX_SEGMENT_SAMPLES)


@pytest.mark.parametrize("args, pattern", [
    ((0.008, 20.0), r"recording\.sample_rate_hz: .*from 1 Hz.*time_scale_s"),
    ((1e12, 20.0), r"recording\.sample_rate_hz"),
    ((100.0, 50.0), r"min_frequency_hz: expected a frequency below 40 Hz"),
    ((8000.0, 20.0, 5000.0), r"max_frequency_hz: expected a frequency from 20 Hz to 3200 Hz"),
    ((8000.0, 20.0, None, 1e-6), r"resolution_hz: expected a resolution from 0\.00763 Hz"),
    ((8000.0, 20.0, 100.0, 50.0), r"resolution_hz: .* to 20 Hz"),
    ((float("nan"), 20.0), r"recording\.sample_rate_hz"),
])
def test_unusable_bands_name_the_library_field(args, pattern):
    with pytest.raises(InputError, match=pattern):
        check_band(*args)
