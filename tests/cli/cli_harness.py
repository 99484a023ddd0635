"""What the command-line tests of `forecast` and `advise` share: running the tool, collecting
failures, and the contract of an argument error (exit code 2, nothing on standard output, one
bounded `cylzone: error:` line naming what is wrong).

A test script is run as `/usr/bin/python3 SCRIPT PATH_TO_CYLZONE`; its folder is on sys.path,
so `from cli_harness import ...` finds this file.
"""
import subprocess
import sys

CLI = sys.argv[1] if len(sys.argv) > 1 else "cylzone"
failures = []


def run(args, timeout=300):
    """Runs the tool with `args`: (exit code, stdout, stderr)."""
    p = subprocess.run([CLI, *args], capture_output=True, text=True, timeout=timeout)
    return p.returncode, p.stdout, p.stderr


def check(name, condition, detail=""):
    if not condition:
        failures.append(f"{name}: {detail}")


def with_option(args, option, value):
    """`args` with `option` set to `value` (replaced when present, else appended)."""
    args = list(args)
    if option in args:
        args[args.index(option) + 1] = value
    else:
        args += [option, value]
    return args


def expect_error(name, args, *fragments):
    """The run of `args` is an argument error whose message holds every fragment."""
    code, out, err = run(args)
    lines = [l for l in err.splitlines() if l.strip()]
    problems = []
    if code != 2:
        problems.append(f"exit code {code}, expected 2")
    if out.strip():
        problems.append(f"stdout not empty: {out[:80]!r}")
    if len(lines) != 1 or not lines[0].startswith("cylzone: error: ") or len(lines[0]) > 1000:
        problems.append(f"expected one bounded 'cylzone: error:' line, got {err[:300]!r}")
    for f in fragments:
        if f not in err:
            problems.append(f"stderr lacks {f!r}: {err.strip()[:300]!r}")
    if problems:
        failures.append(f"{name}: " + "; ".join(problems))


def finish(title):
    """Prints the failures and exits non-zero, or says all passed."""
    if failures:
        print("\n".join(failures))
        sys.exit(1)
    print(f"{title}: all checks passed")
