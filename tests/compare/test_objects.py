"""Objects table: accepted layouts and one clear message per bad row."""

from __future__ import annotations

from pathlib import Path

import pytest

from agepost.compare.objects import AgedObject, read_objects
from agepost.errors import InputError

HEADER = "name,z,age_gyr,age_err_gyr,kind\n"


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "objects.csv"
    path.write_text(text)
    return path


def test_reads_both_kinds_comments_and_extra_columns(tmp_path):
    path = write(
        tmp_path,
        "# invented Lantern objects\nname,z,age_gyr,age_err_gyr,kind,note\n"
        "Okapi-1,3.2,1.6,0.3,gaussian,bright\n"
        "Heron cluster,0,12.9,,lower_limit,\n"
        "Marten-6,6.1,0.75,0.1,,\n",
    )
    assert read_objects(path) == [
        AgedObject("Okapi-1", 3.2, 1.6, 0.3, "gaussian"),
        AgedObject("Heron cluster", 0.0, 12.9, 0.0, "lower_limit"),
        AgedObject("Marten-6", 6.1, 0.75, 0.1, "gaussian"),
    ]


def test_kind_column_is_optional(tmp_path):
    path = write(tmp_path, "name,z,age_gyr,age_err_gyr\nA,1,2,0.5\n")
    assert read_objects(path)[0].kind == "gaussian"


def test_the_demo_objects_file_reads():
    objects = read_objects(Path(__file__).parents[2] / "sample_chains" / "lantern_objects.csv")
    assert len(objects) >= 4
    assert {o.kind for o in objects} == {"gaussian", "lower_limit"}


@pytest.mark.parametrize(
    ("row", "message"),
    [
        ("A,1,-2,0.5,gaussian", "line 2, column age_gyr: -2.0 Gyr is not a positive age"),
        ("A,1,nan,0.5,gaussian", "line 2, column age_gyr: nan is not finite"),
        ("A,1,inf,0.5,gaussian", "column age_gyr: inf is not finite"),
        ("A,1,0,0.5,gaussian", "is not a positive age"),
        ("A,1,old,0.5,gaussian", "column age_gyr: 'old' is not a number"),
        ("A,-1,2,0.5,gaussian", "column z: -1.0 is negative"),
        ("A,1,2,0,gaussian", "must be > 0 for a gaussian age"),
        ("A,1,2,,gaussian", "a gaussian age needs its one-sigma error"),
        ("A,1,2,0.3,lower_limit", "a lower_limit is a hard bound"),
        ("A,1,2,0.3,upper", "'upper' is unknown; use gaussian or lower_limit"),
        (",1,2,0.3,gaussian", "column name: empty"),
        ("A,1,2", "3 cells for 5 columns"),
    ],
)
def test_bad_rows_name_file_line_and_column(tmp_path, row, message):
    path = write(tmp_path, HEADER + row + "\n")
    with pytest.raises(InputError, match="objects.csv") as error:
        read_objects(path)
    assert message in str(error.value)


def test_missing_column_empty_file_and_duplicates(tmp_path):
    with pytest.raises(InputError, match="column 'age_err_gyr' is missing"):
        read_objects(write(tmp_path, "name,z,age_gyr,age_err\nA,1,2,0.5\n"))
    with pytest.raises(InputError, match="is empty"):
        read_objects(write(tmp_path, "# nothing\n"))
    with pytest.raises(InputError, match="no object rows"):
        read_objects(write(tmp_path, HEADER))
    with pytest.raises(InputError, match="'A' appears twice"):
        read_objects(write(tmp_path, HEADER + "A,1,2,0.5,gaussian\nA,2,1,0.5,gaussian\n"))
    with pytest.raises(InputError, match="does not exist"):
        read_objects(tmp_path / "absent.csv")
