"""The domain's exception tree: each error's status and code, one-line details, and disk faults
recognised whether the OS raised them or polars reported them as text."""

from __future__ import annotations

import errno

import pytest

from bodycensus.errors import (
    BadInput,
    BodycensusError,
    Conflict,
    InputError,
    NotFound,
    StorageError,
    TooLarge,
    one_line,
    storage_error,
)


@pytest.mark.parametrize(("error", "status", "code"), [
    (BodycensusError, 500, "internal"), (NotFound, 404, "not_found"),
    (BadInput, 400, "bad_input"), (InputError, 422, "bad_input"), (Conflict, 409, "conflict"),
    (TooLarge, 413, "too_large"), (StorageError, 507, "storage"),
])
def test_each_error_carries_its_status_and_code(error: type[BodycensusError], status: int,
                                                code: str) -> None:
    raised = error("what went wrong; what to do")
    assert (raised.status, raised.code, raised.detail) == (status, code,
                                                           "what went wrong; what to do")
    assert isinstance(raised, BodycensusError)


def test_a_status_may_be_given_per_error_and_input_errors_are_value_errors() -> None:
    assert BadInput("no id column", 422).status == 422 and BadInput("x").status == 400
    assert issubclass(InputError, ValueError) and issubclass(InputError, BadInput)


def test_one_line_squeezes_whitespace_and_shortens() -> None:
    assert one_line("  two\nlines\t here ") == "two lines here"
    long = one_line("word " * 200)
    assert len(long) == 300 and long.endswith("…") and "\n" not in long
    assert one_line(ValueError("from an exception")) == "from an exception"


@pytest.mark.parametrize(("err", "words"), [
    (OSError(errno.ENOSPC, "No space left on device"), "the disk of the data directory is full"),
    (OSError(errno.EROFS, "Read-only file system"), "(Read-only file system)"),
    (OSError(errno.EACCES, "Permission denied"), "(Permission denied)"),
    # polars reports disk faults as text only
    (RuntimeError("I/O error: No space left on device (os error 28)"),
     "the disk of the data directory is full"),
    (RuntimeError("failed: Read-only file system (os error 30)"), "(Read-only file system)"),
])
def test_disk_faults_become_a_storage_error(err: BaseException, words: str) -> None:
    found = storage_error(err, retry="upload the file again")
    assert isinstance(found, StorageError) and found.status == 507
    assert words in found.detail and found.detail.endswith("upload the file again")


@pytest.mark.parametrize("err", [OSError(errno.ENOENT, "No such file"), ValueError("bad cell"),
                                 RuntimeError("out of memory")])
def test_other_faults_are_no_storage_error(err: BaseException) -> None:
    assert storage_error(err) is None
