"""Build step of the wvr Python package (metadata in pyproject.toml).

setuptools builds the pure-Python modules; the compiled module wvr._core comes from the
project's own CMake build, configured for the bindings alone (no tests, tools or benchmarks)
with libwvr linked statically, so the installed package needs no libwvr.so beside it.
CMake reuses ccache when it is installed; WVR_CMAKE_ARGS adds configure options.
"""
import os
import pathlib
import re
import shlex
import shutil
import subprocess
import sys

from setuptools import Extension, setup
from setuptools.command.build_ext import build_ext

ROOT = pathlib.Path(__file__).resolve().parent


def project_version():
    """The version in the top-level CMakeLists.txt's project() call: one place for both."""
    text = (ROOT / "CMakeLists.txt").read_text(encoding="utf-8")
    match = re.search(r"project\(\s*libwvr\s+VERSION\s+([0-9.]+)", text)
    if match is None:
        raise RuntimeError("CMakeLists.txt: no 'project(libwvr VERSION x.y.z' found")
    return match.group(1)


class CMakeExtension(Extension):
    def __init__(self, name, target):
        super().__init__(name, sources=[])
        self.target = target


class CMakeBuild(build_ext):
    def build_extension(self, ext):
        build_dir = pathlib.Path(self.build_temp).resolve() / "cmake"
        configure = [
            "cmake", "-S", str(ROOT), "-B", str(build_dir),
            "-DCMAKE_BUILD_TYPE=Release",
            "-DBUILD_SHARED_LIBS=OFF",
            "-DWVR_BUILD_TESTS=OFF",
            "-DWVR_BUILD_TOOLS=OFF",
            "-DWVR_BUILD_BENCHMARKS=OFF",
            "-DWVR_BUILD_PYTHON=ON",
            f"-DPython3_EXECUTABLE={sys.executable}",
        ]
        if shutil.which("ccache"):
            configure += ["-DCMAKE_CXX_COMPILER_LAUNCHER=ccache",
                          "-DCMAKE_C_COMPILER_LAUNCHER=ccache"]
        configure += shlex.split(os.environ.get("WVR_CMAKE_ARGS", ""))
        jobs = os.environ.get("CMAKE_BUILD_PARALLEL_LEVEL", str(os.cpu_count() or 1))
        # Paths relative to the checkout keep ccache's hits valid across checkouts.
        env = dict(os.environ)
        env.setdefault("CCACHE_BASEDIR", str(ROOT))
        subprocess.run(configure, check=True, env=env)
        subprocess.run(["cmake", "--build", str(build_dir), "--target", ext.target, "-j", jobs],
                       check=True, env=env)
        built = list((build_dir / "python" / "wvr").glob("_core*.so"))
        if len(built) != 1:
            raise RuntimeError(f"expected one compiled wvr/_core*.so in {build_dir}, found {built}")
        destination = pathlib.Path(self.get_ext_fullpath(ext.name))
        destination.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(built[0], destination)


setup(
    version=project_version(),
    ext_modules=[CMakeExtension("wvr._core", target="wvr_python_core")],
    cmdclass={"build_ext": CMakeBuild},
    # Not "build": that is the developers' CMake build folder.
    options={"build": {"build_base": "build-python"}},
)
