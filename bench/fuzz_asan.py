"""The sanitizer run of bench/fuzz.py (--asan): each C core built with AddressSanitizer and
UndefinedBehaviorSanitizer from the sources setup.py lists (C_CORES), then the native/pure
differentials of fuzz.py run under them in child processes. `make fuzz` runs it.
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

FUZZ = Path(__file__).resolve().with_name("fuzz.py")
ROOT = Path(__file__).resolve().parents[1]  # the repository


def c_cores() -> dict[str, tuple[list[str], list[str]]]:
    """setup.py's C_CORES (module -> its C sources and headers, relative to the repository), read as
    a literal, so the sanitizer build compiles exactly the lists the install builds."""
    import ast

    tree = ast.parse((ROOT / "setup.py").read_text(encoding="utf-8"))
    for node in tree.body:
        if isinstance(node, ast.Assign) and any(getattr(t, "id", None) == "C_CORES" for t in node.targets):
            return ast.literal_eval(node.value)
    raise RuntimeError("setup.py: no C_CORES literal")


# the cores with their own options in fuzz.py; every other core goes by --twin-core NAME=PATH
FIRST = ("livefix._native", "livefix.state._gsvcore", "livefix.analysis._sigcore")
# leak stacks naming one of these are the C cores' own (every C source and header of every core)
# (dict.fromkeys: a header several cores share, livefix/_corekit.h, is one file)
C_FILES = tuple(dict.fromkeys(Path(f).name for sources, headers in c_cores().values() for f in sources + headers))


def asan_run(inputs: int, seed: int, gsv_adds: int, sig_n: int) -> int:
    """Build the C core, the GSV assembler and the SignalStats loops with AddressSanitizer +
    UndefinedBehaviorSanitizer into a temporary folder and run the native/pure differentials under
    them. Leaks count only when a stack names one of the C files (the interpreter keeps memory to
    the end of the process)."""
    import os
    import re
    import sysconfig
    import tempfile

    cc = os.environ.get("CC", "gcc")
    libasan = subprocess.run([cc, "-print-file-name=libasan.so"], capture_output=True, text=True).stdout.strip()
    with tempfile.TemporaryDirectory(prefix="livefix-asan-") as tmp:
        built = {}  # module name -> its sanitizer build, one compile of all its sources
        for name, (sources, _) in c_cores().items():
            so = Path(tmp) / (name.rpartition(".")[2] + (sysconfig.get_config_var("EXT_SUFFIX") or ".so"))
            cmd = [cc, "-shared", "-fPIC", "-O1", "-g", "-fsanitize=address,undefined", "-fno-omit-frame-pointer",
                   "-ffp-contract=off", "-Wall", "-I", sysconfig.get_paths()["include"],
                   *(str(ROOT / src) for src in sources), "-o", str(so)]
            subprocess.run(cmd, check=True)
            built[name] = str(so)

        def child(n: int, options: str, adds: int | None = None,
                  sig: int | None = None) -> tuple[subprocess.CompletedProcess, float]:
            env = dict(os.environ, LD_PRELOAD=libasan, PYTHONMALLOC="malloc",
                       ASAN_OPTIONS="detect_leaks=1:exitcode=23:halt_on_error=1" + options,
                       UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1")
            t0 = time.perf_counter()
            r = subprocess.run([sys.executable, str(FUZZ), "--native-diff", "--inputs", str(n), "--seed",
                                str(seed), "--core", built["livefix._native"], "--gsv-core", built["livefix.state._gsvcore"],
                                "--sig-core", built["livefix.analysis._sigcore"],
                                *(f"--twin-core={name}={so}" for name, so in built.items() if name not in FIRST),
                                "--gsv-adds", str(n if adds is None else adds),
                                "--sig-epochs", str(min(n, 2000) if sig is None else sig)],
                               env=env, capture_output=True, text=True)
            return r, time.perf_counter() - t0

        # The interpreter keeps some memory to the end of the process, so a leak is judged two ways:
        # stacks naming a core's C file on a short run with full (slow) unwinding, and leaked allocations
        # of the whole run against a 100-input run (a per-line leak grows with the inputs).
        base, _ = child(100, "")
        traced, _ = child(min(inputs, 2000), ":fast_unwind_on_malloc=0:malloc_context_size=12")
        r, dt = child(inputs, "", gsv_adds, sig_n)
    sys.stdout.write(r.stdout)

    def allocs(err: str) -> int:
        m = re.search(r"leaked in (\d+) allocation", err)
        return int(m.group(1)) if m else 0

    named = [b for b in re.split(r"\n(?=(?:Direct|Indirect) leak of)", traced.stderr)
             if re.match(r"(Direct|Indirect) leak of", b) and any(f in b for f in C_FILES)]
    grown = allocs(r.stderr) - allocs(base.stderr)
    leaks = len(named) + (grown > 50)
    errs = base.stderr + traced.stderr + r.stderr
    asan = errs.count("ERROR: AddressSanitizer")
    ubsan = errs.count("runtime error:")
    for block in named[:3]:
        print(block[:1500], file=sys.stderr)
    if asan or ubsan:
        print(errs[-4000:], file=sys.stderr)
    exits = {x.returncode for x in (base, traced, r)}
    ok = exits <= {0, 23} and not (asan or ubsan or leaks)  # 23: the leak report of the interpreter's own
    print(f"RESULT | native fuzz under ASan+UBSan: memory errors, UB, leaks | {asan}, {ubsan}, {leaks} "
          f"(leaked allocations {allocs(r.stderr)} vs {allocs(base.stderr)} for 100 inputs; "
          f"{len(named)} naming one of the cores' {len(C_FILES)} C/H files) | 0, 0, 0 | {'met' if ok else 'NOT met'}")
    print(f"RESULT | native fuzz under ASan+UBSan: time | {dt:.0f} s | info | met")
    if not exits <= {0, 23}:
        print(f"child exit status {sorted(exits)}", file=sys.stderr)
    return 0 if ok else 1
