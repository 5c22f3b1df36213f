"""What the end-to-end tests share: the binary, the demo folder, the exit
codes documented in README.md, and running the CLI.

Environment: LOOPAUDIT (the binary) and LOOPAUDIT_DEMO (data/demo), set by CTest.
"""
import json
import os
import subprocess

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


class ExpectsFailure:
    """A unittest.TestCase mixin for bad inputs: one clear message, a documented exit code."""

    def expect(self, code, *args, contains=()):
        """Runs loopaudit with args and checks its exit code, that it says one line, and that the line holds contains."""
        result = run(*args, check=False)
        self.assertEqual(result.returncode, code, result.stderr)
        self.assertEqual(result.stderr.count("\n"), 1, "one line of message: " + result.stderr)
        for text in contains:
            self.assertIn(text, result.stderr)
        return result
