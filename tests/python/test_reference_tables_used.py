"""Every reference table shipped under testdata/reference (all subfolders) is read by at least
one test: its path relative to testdata/reference, or its file name, appears in a C++ or
Python test source. READMEs describe the tables and are not tables."""
import pathlib

ROOT = pathlib.Path(__file__).resolve().parents[2]
REFERENCE = ROOT / "testdata" / "reference"
THIS = pathlib.Path(__file__).resolve()


def source_texts():
    sources = [p for p in (ROOT / "tests").rglob("*") if p.suffix in (".cpp", ".hpp", ".py")]
    return {p: p.read_text() for p in sources if p.resolve() != THIS}


def test_every_reference_table_is_read_by_a_test():
    tables = [p for p in REFERENCE.rglob("*") if p.is_file() and not p.name.startswith("README")]
    assert len(tables) >= 24, "the reference folder lost its tables"
    texts = source_texts().values()
    unused = []
    for table in tables:
        relative = table.relative_to(REFERENCE).as_posix()
        # Tables named in a loop are written as their stem ("may22" + "_sounding.csv").
        stem = table.stem.removesuffix("_sounding")
        if not any(relative in text or table.name in text or f'"{stem}"' in text
                   for text in texts):
            unused.append(relative)
    assert not unused, f"reference tables no test reads: {unused}"
