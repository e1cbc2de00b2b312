"""The rule of conftest.py that a skip fails unless the test is marked optional_dependency,
run on small test files in a scratch folder with the project's conftest."""
import pathlib

pytest_plugins = ["pytester"]

CONFTEST = pathlib.Path(__file__).with_name("conftest.py")

TESTS = '''
import pytest

def test_plain_skip():
    pytest.skip("needs something missing")

@pytest.mark.optional_dependency("not every build has it")
def test_optional_skip():
    pytest.skip("optional thing missing")

def test_passes():
    pass
'''


def test_a_skip_fails_unless_the_dependency_is_optional(pytester):
    pytester.makeconftest(CONFTEST.read_text())
    pytester.makepyfile(test_sample=TESTS)
    result = pytester.runpytest("-rs", "-p", "no:cacheprovider")
    result.assert_outcomes(passed=1, failed=1, skipped=1)
    result.stdout.fnmatch_lines(["*test_plain_skip skipped (*needs something missing*"])


def test_skyphase_missing_from_a_build_that_declares_it_fails(pytester, monkeypatch):
    pytester.makeconftest(CONFTEST.read_text())
    pytester.makepyfile(test_cli_sample="def test_uses_the_program(skyphase):\n    pass\n")
    monkeypatch.setenv("WVR_SKYPHASE", "")
    monkeypatch.setenv("WVR_BUILD_TOOLS", "ON")
    pytester.runpytest("-p", "no:cacheprovider").assert_outcomes(errors=1)
    # A build configured without the program says so, and only then is the skip accepted.
    monkeypatch.setenv("WVR_BUILD_TOOLS", "OFF")
    pytester.runpytest("-p", "no:cacheprovider").assert_outcomes(skipped=1)
