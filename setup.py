"""Build of the one compiled kernel (the Stieltjes loop); everything else is in pyproject.toml.

The extension is optional: when no C compiler is available (or it fails), the install goes
on without it and ``workbench.polynomials`` uses its numpy loop, which gives the same numbers
(see ``workbench/polynomials/stieltjes_kernel.py``).
"""

from setuptools import Extension, setup
from setuptools.command.build_ext import build_ext


class BuildKernel(build_ext):
    """Compiler flags per compiler family; a failed build is reported, never fatal."""

    def build_extensions(self) -> None:
        if self.compiler.compiler_type == "unix":
            # no fused multiply-add: the mantissas must be the numpy loop's numbers bit for bit;
            # -fopenmp-simd only honours the '#pragma omp simd' of the two sums (no OpenMP runtime)
            flags = ["-O3", "-ffp-contract=off", "-fopenmp-simd", "-fno-math-errno"]
        elif self.compiler.compiler_type == "msvc":
            flags = ["/O2", "/fp:precise"]
        else:
            flags = []
        for extension in self.extensions:
            extension.extra_compile_args = flags
        super().build_extensions()

    def run(self) -> None:
        try:
            super().run()
        except Exception as exc:  # noqa: BLE001 - any build failure leaves the numpy loop
            print(f"warning: the compiled Stieltjes kernel was not built ({exc}); the numpy loop will be used")

    def build_extension(self, extension) -> None:
        try:
            super().build_extension(extension)
        except Exception as exc:  # noqa: BLE001
            print(f"warning: the compiled Stieltjes kernel was not built ({exc}); the numpy loop will be used")


setup(
    ext_modules=[Extension("workbench.polynomials._stieltjes", ["workbench/polynomials/_stieltjes.c"], optional=True)],
    cmdclass={"build_ext": BuildKernel},
)
