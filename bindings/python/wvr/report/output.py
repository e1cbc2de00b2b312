"""Where a report is written: built in a hidden directory beside the output and renamed into
place when complete, so that a reader never sees half a report and an existing report is
never rewritten in place. An existing output directory is replaced only when it is a report
this package wrote (its report.json names our schema) or is empty; anything else is refused.
"""
import contextlib
import json
import os
import pathlib
import shutil
import signal
import tempfile
import threading

import wvr
from wvr.report.data import SCHEMA

__all__ = ["ReportOutputError", "report_directory"]


class ReportOutputError(wvr.WvrValueError):
    """The output path cannot take a report (it holds something that is not one of ours)."""


def _is_our_report(directory):
    try:
        document = json.loads((directory / "report.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return isinstance(document, dict) and document.get("schema") == SCHEMA


def check_output(directory):
    """Raises ReportOutputError unless `directory` is absent, empty or one of our reports."""
    directory = pathlib.Path(directory)
    if not directory.exists() and not directory.is_symlink():
        return
    if directory.is_symlink() or not directory.is_dir():
        raise ReportOutputError(f"output: {directory} exists and is not a directory")
    if any(directory.iterdir()) and not _is_our_report(directory):
        raise ReportOutputError(
            f"output: {directory} exists and is not a night report (no report.json of schema "
            f"{SCHEMA}); give a new or empty directory, or remove it first")


@contextlib.contextmanager
def _terminate_cleanly():
    """SIGTERM (e.g. sent because the parent died) raises SystemExit, so that the partial
    directory is removed on the way out; restores the previous handler afterwards. Only the
    main thread can install handlers; elsewhere the context does nothing."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def exit_cleanly(signum, frame):
        raise SystemExit(128 + signum)

    previous = signal.signal(signal.SIGTERM, exit_cleanly)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def _apply_umask(directory):
    """mkdtemp makes private directories; a report gets the permissions of any new one."""
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(directory, 0o777 & ~umask)


def _swap_into_place(partial, output):
    """Renames `partial` to `output`; an existing `output` is moved aside first, put back if
    the rename fails, and deleted once the new one is in place."""
    if not output.exists():
        os.rename(partial, output)
        return
    aside = pathlib.Path(tempfile.mkdtemp(prefix=f".{output.name}.old-", dir=output.parent))
    try:
        os.rename(output, aside / "report")
        try:
            os.rename(partial, output)
        except BaseException:
            os.rename(aside / "report", output)
            raise
    finally:
        shutil.rmtree(aside, ignore_errors=True)


@contextlib.contextmanager
def report_directory(output):
    """Yields a new hidden directory beside `output` to write the report into; on success
    renames it to `output` (moving an existing report of ours aside first and deleting it
    after), on any error or termination deletes it and leaves `output` as it was."""
    output = pathlib.Path(output)
    check_output(output)
    output.parent.mkdir(parents=True, exist_ok=True)
    with _terminate_cleanly():
        # SIGTERM is held back until the new directory is known to the cleanup below: arriving
        # after mkdtemp made it but before `partial` names it, it would leave it behind.
        signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGTERM})
        partial = None
        try:
            partial = pathlib.Path(tempfile.mkdtemp(prefix=f".{output.name}.partial-",
                                                    dir=output.parent))
            signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGTERM})
            _apply_umask(partial)
            yield partial
            check_output(output)  # the output may have appeared while we were writing
            _swap_into_place(partial, output)
        except BaseException:
            signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGTERM})
            if partial is not None:
                shutil.rmtree(partial, ignore_errors=True)
            raise
