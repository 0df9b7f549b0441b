"""IEC 60063 preferred numbers."""

import pytest

from explorer.preferred import SERIES, next_preferred, preferred_values


@pytest.fixture
def iec60063_2015_tables():
    """IEC 60063:2015, table 1 (E6, E12, E24 columns), as printed in the standard."""
    return {
        "E6": "1.0 1.5 2.2 3.3 4.7 6.8",
        "E12": "1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2",
        "E24": "1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 7.5 8.2 9.1",
    }


def test_tables_exact(iec60063_2015_tables):
    for name, text in iec60063_2015_tables.items():
        assert SERIES[name] == tuple(float(x) for x in text.split())


def test_rounding_the_geometric_series_is_wrong():
    # why the tables are hard-coded: round(10^(i/24), 1) differs from IEC 60063 at eight places
    rounded = [round(10 ** (i / 24), 1) for i in range(24)]
    diff = [a for a, b in zip(SERIES["E24"], rounded) if a != b]
    assert diff == [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]


def test_subsets():
    # IEC 60063: each series contains the coarser ones (E6 ⊂ E12 ⊂ E24)
    assert set(SERIES["E6"]) <= set(SERIES["E12"]) <= set(SERIES["E24"])


def test_values_and_next():
    assert preferred_values(90e-9, 300e-9, "E6") == [1e-07, 1.5e-07, 2.2e-07]
    assert next_preferred(230e-9, "E12") == 2.7e-07
    assert next_preferred(220e-9, "E12") == 2.2e-07
    assert next_preferred(230e-9, "E12", down=True) == 2.2e-07
    assert next_preferred(9.5, "E24") == 10.0
