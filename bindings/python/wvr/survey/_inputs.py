"""The nights a survey runs over: night files, MeasurementSets (casacore table directories),
glob patterns and manifests, resolved to a sorted list of distinct absolute paths."""
import glob
import hashlib
import json
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
            matches = [m for m in matches if _is_night_input(m)]
            if not matches:
                raise SurveyInputError(
                    f"nights: the pattern '{entry}' matches no file or MeasurementSet")
            found.update(m.resolve() for m in matches)
        else:
            path = pathlib.Path(entry)
            if not _is_night_input(path):
                raise SurveyInputError(f"nights: '{entry}' is not a file or a MeasurementSet")
            found.add(path.resolve())
    if not found:
        raise SurveyInputError("nights: none given (files, glob patterns or a manifest)")
    return sorted(found)


def _hash_file(digest, path):
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(_HASH_BLOCK_BYTES), b""):
            digest.update(block)


def content_sha256(path):
    """Hex SHA-256 identifying a night in the catalogue: of a file's bytes; of a
    MeasurementSet, of every file's relative path, size and bytes in sorted order, except
    casacore's table.lock files (rewritten by any program that opens a table with locking,
    though no data changed)."""
    path = pathlib.Path(path)
    digest = hashlib.sha256()
    if not path.is_dir():
        _hash_file(digest, path)
        return digest.hexdigest()
    for member in sorted(p for p in path.rglob("*") if p.is_file() and p.name != "table.lock"):
        relative = member.relative_to(path).as_posix().encode()
        digest.update(len(relative).to_bytes(8, "little") + relative)
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
