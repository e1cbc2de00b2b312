"""Installs the wvr package from a clean copy of the source tree with Debian's own build tools,
as a user would, and checks that the installed package works:

    /usr/bin/python3 -m venv --system-site-packages VENV
    VENV/bin/python -m pip install --no-build-isolation .

Usage: check_pip_install.py SOURCE_ROOT WORK_DIR. The copy holds the files git knows about
(tracked, or new and not ignored), so build folders never leak into it. No network: pip is
told not to look at an index, so a missing build dependency fails here instead of waiting.
"""
import os
import pathlib
import shutil
import subprocess
import sys

CHECK_INSTALLED = r"""
import pathlib, sys
import wvr, wvr._core
venv = pathlib.Path(sys.argv[1]).resolve()
package = pathlib.Path(wvr.__file__).resolve().parent
assert venv in package.parents, f"wvr imported from {package}, not from {venv}"
assert (package / "py.typed").is_file(), "py.typed missing"
assert (package / "_core.pyi").is_file(), "_core.pyi missing"
assert wvr.__version__ == sys.argv[2], (wvr.__version__, sys.argv[2])
profile = wvr.parametric_profile(altitude_m=5000.0, pwv_mm=1.5)
assert abs(profile.pwv_mm - 1.5) < 1e-6, profile.pwv_mm
try:
    wvr.parametric_profile(pwv_mm=-1.0)
except wvr.WvrValueError:
    pass
else:
    raise AssertionError("negative temperature accepted")
import wvr.report
print("installed wvr", wvr.__version__, "at", package)
"""


def source_files(root):
    listed = subprocess.run(
        ["git", "-C", str(root), "ls-files", "--cached", "--others", "--exclude-standard", "-z"],
        check=True, capture_output=True).stdout.decode().split("\0")
    return [name for name in listed if name and (root / name).is_file()]


def project_version(root):
    for line in (root / "CMakeLists.txt").read_text(encoding="utf-8").splitlines():
        if line.startswith("project(libwvr VERSION "):
            return line.split()[2]
    raise RuntimeError("no project(libwvr VERSION ...) in CMakeLists.txt")


def main():
    root = pathlib.Path(sys.argv[1]).resolve()
    work = pathlib.Path(sys.argv[2]).resolve()
    # The copy lives at the same path every run so that ccache's hits survive its removal.
    source = work / "source"
    venv = work / "venv"
    for folder in (source, venv):
        shutil.rmtree(folder, ignore_errors=True)
    for name in source_files(root):
        target = source / name
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(root / name, target)

    subprocess.run(["/usr/bin/python3", "-m", "venv", "--system-site-packages", str(venv)],
                   check=True)
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env.update(PIP_NO_INDEX="1", PIP_DISABLE_PIP_VERSION_CHECK="1")
    env.setdefault("CMAKE_BUILD_PARALLEL_LEVEL", "2")
    # Cheap in CI: pybind11's link-time optimisation of the module re-runs on every link and
    # ccache cannot keep it; what is checked here is the packaging, not the optimiser.
    env.setdefault("WVR_CMAKE_ARGS", "-DCMAKE_INTERPROCEDURAL_OPTIMIZATION=OFF")
    python = venv / "bin" / "python"
    subprocess.run([str(python), "-m", "pip", "install", "--no-build-isolation", "."],
                   cwd=source, env=env, check=True)
    # Away from the source tree, so that only the installed package can be imported.
    subprocess.run([str(python), "-c", CHECK_INSTALLED, str(venv), project_version(root)],
                   cwd=work, env=env, check=True)


if __name__ == "__main__":
    main()
