"""Asking a packaged table for a column it does not have names the file and the column."""

import pytest

from calc.errors import DataFileError
from calc.tables import load_table


def test_an_unknown_column_names_the_file_and_the_column():
    t = load_table("iec60269_1_fuse_ratings.csv")
    with pytest.raises(DataFileError) as err:
        t["rated_a"]
    assert str(err.value) == "iec60269_1_fuse_ratings.csv: no column 'rated_a'"
