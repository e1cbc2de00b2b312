"""The nights a survey runs over: night files, MeasurementSets (casacore table directories),
glob patterns and manifests, resolved to a sorted list of distinct absolute paths."""
import glob
import hashlib
import json
import os
import pathlib

import wvr

_HASH_BLOCK_BYTES = 1 << 20


class SurveyInputError(wvr.WvrValueError):
    """A night, glob or manifest given to the survey that names no readable file."""


def is_measurement_set(path):
    """True for a casacore table directory whose table.info says it is a MeasurementSet
    (casacore writes "Type = Measurement Set" as the first line; from casacore's table
    layout, checked on tables written by python-casacore 3.5)."""
    info = pathlib.Path(path) / "table.info"
    if not (pathlib.Path(path).is_dir() and info.is_file()):
        return False
    try:
        with open(info, encoding="utf-8", errors="replace") as handle:
            first_line = handle.readline()
    except OSError:
        return False
    return first_line.strip().replace(" ", "") == "Type=MeasurementSet"


def _is_night_input(path):
    return path.is_file() or is_measurement_set(path)


def _enclosing_measurement_set(path):
    """The MeasurementSet directory `path` lies inside, or None."""
    return next((p for p in path.parents if is_measurement_set(p)), None)


def read_manifest(path):
    """Paths in a manifest: one per line, '#' starts a comment, relative paths are relative to
    the manifest's folder; a line may be a glob pattern."""
    manifest = pathlib.Path(path)
    try:
        lines = manifest.read_text(encoding="utf-8").splitlines()
    except OSError as error:
        raise SurveyInputError(f"manifest: cannot read {manifest}: {error}") from error
    entries = []
    for line in lines:
        entry = line.split("#", 1)[0].strip()
        if entry:
            entries.append(str(manifest.parent / entry))
    return entries


def resolve_nights(nights=(), manifests=()):
    """Absolute paths of every night named by `nights` (night files, MeasurementSet
    directories or glob patterns) and by the manifests, in sorted order, each once. A name that
    matches neither raises SurveyInputError naming it."""
    entries = [str(n) for n in nights]
    for manifest in manifests:
        entries.extend(read_manifest(manifest))
    found = set()
    for entry in entries:
        if glob.has_magic(entry):
            matches = [pathlib.Path(m) for m in glob.glob(entry, recursive=True)]
            # A recursive pattern also matches the files inside a MeasurementSet: its parts.
            matches = [m for m in matches
                       if _is_night_input(m) and _enclosing_measurement_set(m) is None]
            if not matches:
                raise SurveyInputError(
                    f"nights: the pattern '{entry}' matches no file or MeasurementSet")
            found.update(m.resolve() for m in matches)
        else:
            path = pathlib.Path(entry)
            if not _is_night_input(path):
                raise SurveyInputError(f"nights: '{entry}' is not a file or a MeasurementSet")
            enclosing = _enclosing_measurement_set(path)
            if enclosing is not None:
                raise SurveyInputError(f"nights: '{entry}' is a part of the MeasurementSet "
                                       f"{enclosing}, not a night")
            found.add(path.resolve())
    if not found:
        raise SurveyInputError("nights: none given (files, glob patterns or a manifest)")
    return sorted(found)


def _hash_file(digest, path):
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(_HASH_BLOCK_BYTES), b""):
            digest.update(block)


def _measurement_set_files(path):
    """(relative name, path) of every file of a MeasurementSet, in sorted order, following
    symbolic links (subtables may be links to other directories; each directory is walked
    once), except casacore's table.lock files."""
    files, seen = [], set()
    for folder, directories, names in os.walk(path, followlinks=True):
        real = os.path.realpath(folder)
        if real in seen:  # a link cycle, or a subtable linked twice
            directories[:] = []
            continue
        seen.add(real)
        for name in names:
            if name != "table.lock":
                member = pathlib.Path(folder) / name
                files.append((member.relative_to(path).as_posix(), member))
    return sorted(files)


def content_sha256(path):
    """Hex SHA-256 identifying a night in the catalogue: of a file's bytes; of a
    MeasurementSet, of every file's relative path, size and bytes in sorted order, except
    casacore's table.lock files (rewritten by any program that opens a table with locking,
    though no data changed). Every byte is read, at every run of a survey."""
    path = pathlib.Path(path)
    digest = hashlib.sha256()
    if not path.is_dir():
        _hash_file(digest, path)
        return digest.hexdigest()
    for relative, member in _measurement_set_files(path):
        name = relative.encode()
        digest.update(len(name).to_bytes(8, "little") + name)
        digest.update(member.stat().st_size.to_bytes(8, "little"))
        _hash_file(digest, member)
    return digest.hexdigest()


def canonical_options(options):
    """The processing options as canonical JSON (sorted keys, no spaces): equal options give
    equal text, so the catalogue can tell whether a night was processed with them."""
    options = dict(options or {})
    try:
        return json.dumps(options, sort_keys=True, separators=(",", ":"), allow_nan=False)
    except (TypeError, ValueError) as error:
        raise SurveyInputError(f"options: not representable as JSON ({error}): {options!r}") \
            from error
