"""The nights a survey runs over: files, glob patterns and manifests, resolved to a sorted list
of distinct absolute paths."""
import glob
import hashlib
import json
import pathlib

import wvr

_HASH_BLOCK_BYTES = 1 << 20


class SurveyInputError(wvr.WvrValueError):
    """A night, glob or manifest given to the survey that names no readable file."""


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
    """Absolute paths of every night named by `nights` (paths or glob patterns) and by the
    manifests, in sorted order, each once. A name that matches no file raises
    SurveyInputError naming it."""
    entries = [str(n) for n in nights]
    for manifest in manifests:
        entries.extend(read_manifest(manifest))
    found = set()
    for entry in entries:
        if glob.has_magic(entry):
            matches = [pathlib.Path(m) for m in glob.glob(entry, recursive=True)]
            matches = [m for m in matches if m.is_file()]
            if not matches:
                raise SurveyInputError(f"nights: the pattern '{entry}' matches no file")
            found.update(m.resolve() for m in matches)
        else:
            path = pathlib.Path(entry)
            if not path.is_file():
                raise SurveyInputError(f"nights: '{entry}' is not a file")
            found.add(path.resolve())
    if not found:
        raise SurveyInputError("nights: none given (files, glob patterns or a manifest)")
    return sorted(found)


def content_sha256(path):
    """Hex SHA-256 of the file's bytes: the identity of a night in the catalogue."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(_HASH_BLOCK_BYTES), b""):
            digest.update(block)
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
