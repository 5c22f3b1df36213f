"""What the end-to-end tests share: the binary, the demo folder, the exit
codes documented in README.md, and running the CLI.

Environment: LOOPAUDIT (the binary) and LOOPAUDIT_DEMO (data/demo), set by CTest.
"""
import json
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time

BINARY = os.environ.get("LOOPAUDIT", "loopaudit")
DEMO = os.environ.get("LOOPAUDIT_DEMO", "../../data/demo")

# Exit codes documented in README.md.
USAGE, INPUT, SETTINGS, NO_RESULT, OUTPUT = 2, 3, 4, 5, 6


def run(*args, check=True, cwd=None):
    """Runs loopaudit with args; raises with its stderr when check and it fails."""
    result = subprocess.run([BINARY, *map(str, args)], capture_output=True, text=True, timeout=300, cwd=cwd)
    if check and result.returncode != 0:
        raise AssertionError(f"loopaudit {' '.join(map(str, args))} failed ({result.returncode}):\n{result.stderr}")
    return result


def load(path):
    with open(path) as f:
        return json.load(f)


def codes(result):
    """The diagnostic codes of a JSON result."""
    return [d["code"] for d in result["diagnostics"]]


# Runs a command and prints its exit code and peak RSS (KiB). A small process
# of its own starts it: a child forked from a test's interpreter would count
# the interpreter's memory in its peak.
LAUNCHER = """
import json, os, subprocess, sys
child = subprocess.Popen(sys.argv[1:], stdout=subprocess.DEVNULL)
_, status, usage = os.wait4(child.pid, 0)
print(json.dumps([os.waitstatus_to_exitcode(status), usage.ru_maxrss]))
"""


def run_measured(args, timeout=300):
    """Runs loopaudit; returns (exit code, stderr, seconds, peak RSS in MiB)."""
    start = time.monotonic()
    process = subprocess.Popen([sys.executable, "-c", LAUNCHER, BINARY, *map(str, args)], stdout=subprocess.PIPE,
                               stderr=subprocess.PIPE, text=True, start_new_session=True)
    try:
        out, err = process.communicate(timeout=timeout)
    except subprocess.TimeoutExpired:
        os.killpg(process.pid, signal.SIGKILL)
        process.communicate()
        raise AssertionError(f"loopaudit {' '.join(map(str, args))} ran over {timeout} s")
    code, rss_kib = json.loads(out)
    return code, err, time.monotonic() - start, rss_kib / 1024


class TempFolder:
    """A unittest.TestCase mixin: a folder of the class's own, removed after its tests."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_e2e_")

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    @classmethod
    def path(cls, name):
        return os.path.join(cls.folder, name)


class ExpectsFailure:
    """A unittest.TestCase mixin for bad inputs: a clear message, a documented exit code."""

    one_line_message = True  # the message is one line (a class may say it can be more)

    def expect(self, code, *args, contains=()):
        """Runs loopaudit with args and checks its exit code, the message's lines, and that it holds contains."""
        result = run(*args, check=False)
        self.assertEqual(result.returncode, code, result.stderr)
        if self.one_line_message:
            self.assertEqual(result.stderr.count("\n"), 1, "one line of message: " + result.stderr)
        for text in contains:
            self.assertIn(text, result.stderr)
        return result
