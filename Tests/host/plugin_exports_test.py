#!/usr/bin/python3
"""The plugin binaries export their format's entry points and nothing of Kerf's own code.

A host loads many plugins into one process. If two builds of Kerf (say the VST3 and the LV2
of different versions, or a host that loads with RTLD_GLOBAL) both export kerf::dsp
functions, the dynamic linker may bind one plugin's calls to the other's code: a crash or
wrong audio. Common practice: a plugin exports only its entry points.

Entry points (sources):
  VST3: GetPluginFactory, ModuleEntry, ModuleExit (VST3 SDK, Linux module entry points)
  LV2:  lv2_descriptor (LV2 core, lv2.h), lv2ui_descriptor (LV2 UI, ui.h)
Weak and unique symbols of C++ standard-library templates (nm types W, V, u) are allowed:
their definitions are identical wherever they are instantiated (vague linkage, Itanium C++
ABI).

Usage: plugin_exports_test.py VST3_SO LV2_SO
"""
import re
import subprocess
import sys

ENTRY_POINTS = {
    "vst3": {"GetPluginFactory", "ModuleEntry", "ModuleExit"},
    "lv2": {"lv2_descriptor", "lv2ui_descriptor"},
}


def exported(path):
    out = subprocess.run(["nm", "-D", "--defined-only", path], capture_output=True, text=True,
                         check=True, timeout=30).stdout
    syms = []
    for line in out.splitlines():
        parts = line.split()
        if len(parts) >= 3:
            syms.append((parts[1], parts[2]))
    return syms


def demangle(names):
    if not names:
        return []
    r = subprocess.run(["c++filt"], input="\n".join(names), capture_output=True, text=True,
                       timeout=30)
    return r.stdout.splitlines() if r.returncode == 0 else names


def main():
    failures = 0
    for kind, path in (("vst3", sys.argv[1]), ("lv2", sys.argv[2])):
        syms = exported(path)
        names = {n for _, n in syms}
        missing = sorted(ENTRY_POINTS[kind] - names)
        extra = [n for t, n in syms if n not in ENTRY_POINTS[kind]
                 and (t not in ("W", "V", "u") or re.search(r"kerf|Kerf|juce", n))]
        print(f"{kind}: {path}: {len(syms)} exported symbols; entry points "
              f"{sorted(ENTRY_POINTS[kind] & names)}")
        if missing:
            failures += 1
            print(f"FAIL {kind}: entry points missing: {missing}")
        if extra:
            failures += 1
            print(f"FAIL {kind}: {len(extra)} symbols beyond the entry points, e.g.:")
            for d in demangle(extra[:15]):
                print("       " + d)
    print("FAILED" if failures else "passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
