"""Size limits: no source file over 500 lines, no function over 60 lines.

A function's length runs from the line of the opening brace of its body to the line of its
closing brace, both counted. Lambdas count inside the function that holds them; member functions
defined in a class body count like any other; a lambda assigned at namespace scope counts as a
function of its own (one nested in a namespace-scope initialiser is not measured).

The scanner is a brace matcher, not a parser: it blanks comments, string and character literals
(raw strings too) and preprocessor lines, keeping the line breaks, then tells the braces of
namespace, class, enum and linkage bodies and of initialisers from those of function bodies by
what precedes them.

Prints the limits, then one line per file or function over them; exits 1 if there is any.
Usage: check_sizes.py [PROJECT_ROOT]          (default: two folders above this script)
       check_sizes.py --list FILE...          (every function found, with its length)
"""
import pathlib
import re
import sys

MAX_FILE_LINES = 500
MAX_FUNCTION_LINES = 60
SOURCE_SUFFIXES = {".hpp", ".cpp", ".h", ".cc", ".hh", ".ipp", ".inl"}
SCANNED = ("src", "include")

RAW_PREFIX = re.compile(r"(?:u8|u|U|L)?R$")
IDENTIFIER_TAIL = re.compile(r"[A-Za-z0-9_]+$")


def blank(text):
    """The text with comments, literals and preprocessor lines turned into spaces, newlines kept.

    A string keeps its quotes ("" with spaces between) so that `extern "C"` stays recognisable.
    """
    out = []
    i, n = 0, len(text)
    at_line_start = True

    def spaces(segment):
        return "".join("\n" if c == "\n" else " " for c in segment)

    while i < n:
        c = text[i]
        if at_line_start and c == "#":
            # A preprocessor line, with its backslash continuations and any comment on it.
            j = i
            while j < n and text[j] != "\n":
                if text.startswith("/*", j):
                    end = text.find("*/", j + 2)
                    j = n if end < 0 else end + 2
                    continue
                if text[j] == "\\" and j + 1 < n and text[j + 1] == "\n":
                    j += 2
                    continue
                j += 1
            out.append(spaces(text[i:j]))
            i = j
            continue
        if c == "\n":
            at_line_start = True
            out.append(c)
            i += 1
            continue
        if c in " \t\r\f\v":
            out.append(c)
            i += 1
            continue
        at_line_start = False
        if text.startswith("//", i):
            j = text.find("\n", i)
            j = n if j < 0 else j
            out.append(spaces(text[i:j]))
            i = j
        elif text.startswith("/*", i):
            j = text.find("*/", i + 2)
            j = n if j < 0 else j + 2
            out.append(spaces(text[i:j]))
            i = j
        elif c == '"':
            prefix = IDENTIFIER_TAIL.search("".join(out[-8:]))
            if prefix and RAW_PREFIX.fullmatch(prefix.group(0)):
                open_paren = text.find("(", i + 1)
                delimiter = text[i + 1:open_paren]
                close = text.find(")" + delimiter + '"', open_paren + 1)
                j = n if close < 0 else close + len(delimiter) + 2
            else:
                j = i + 1
                while j < n and text[j] != '"' and text[j] != "\n":
                    j += 2 if text[j] == "\\" else 1
                j = min(j + 1, n)
            out.append('"' + spaces(text[i + 1:j - 1]) + '"')
            i = j
        elif c == "'":
            word = IDENTIFIER_TAIL.search("".join(out[-64:]))
            if word and word.group(0)[0].isdigit():
                out.append(" ")  # a digit separator: 1'000'000
                i += 1
                continue
            j = i + 1
            while j < n and text[j] != "'" and text[j] != "\n":
                j += 2 if text[j] == "\\" else 1
            j = min(j + 1, n)
            out.append("'" + spaces(text[i + 1:j - 1]) + "'")
            i = j
        else:
            out.append(c)
            i += 1
    return "".join(out)


def collapse_groups(head):
    """The head with the inside of every balanced (), [] and {} removed: "f(int a) const"."""
    out, depth = [], 0
    closing = {")": "(", "]": "[", "}": "{"}
    for c in head:
        if c in "([{":
            if depth == 0:
                out.append(c)
            depth += 1
        elif c in closing:
            depth = max(depth - 1, 0)
            if depth == 0:
                out.append(c)
        elif depth == 0:
            out.append(c)
    return "".join(out)


QUALIFIERS = (r"(?:\s*(?:const|volatile|noexcept\s*(?:\(\))?|override|final|mutable|constexpr|consteval|"
              r"static|&&|&|throw\s*\(\)|try|\[\[[^\]]*\]\]))*")
TRAILING_RETURN = r"(?:\s*->\s*[^;{}=]+?)?"
REQUIRES = r"(?:\s*requires\b[^;{}]+?)?"
FUNCTION_TAIL = re.compile(r"\)" + QUALIFIERS + TRAILING_RETURN + REQUIRES + r"\s*$")
MEMBER_INIT_START = re.compile(r"\)" + QUALIFIERS + r"\s*:(?!:)")
LAMBDA_INTRO = re.compile(r"(?:^|[=(,{\[?:]|\breturn)\s*\[\]\s*(?:<[^;{}]*>)?\s*(?:\(\))?" + QUALIFIERS +
                          TRAILING_RETURN + r"\s*$")
NAMESPACE = re.compile(r"\bnamespace\b")
LINKAGE = re.compile(r'^\s*extern\s*"\s*"\s*$')
ENUM = re.compile(r"^\s*(?:typedef\s+)?enum\b")
CLASS = re.compile(r"\b(?:class|struct|union)\b")
NAME_BEFORE_PARAMS = re.compile(r"((?:~?[A-Za-z_]\w*(?:\s*<[^()]*>)?\s*::\s*)*(?:operator\s*[^\s(]+|operator\s*\(\)|~?[A-Za-z_]\w*))\s*\(\)")
NOT_NAMES = {"decltype", "alignas", "noexcept", "sizeof", "__attribute__", "requires", "throw"}


def classify(head):
    """What a `{` opens at namespace or class scope, given the text before it since the last `;`."""
    flat = collapse_groups(head)
    flat_stripped = re.sub(r"^\s*(?:public|private|protected)\s*:(?!:)", "", flat)
    if NAMESPACE.search(flat_stripped):
        return "namespace"
    if LINKAGE.match(flat_stripped):
        return "namespace"
    if ENUM.match(re.sub(r"^\s*template\s*<[^;{}]*>", "", flat_stripped)):
        return "enum"
    if MEMBER_INIT_START.search(flat_stripped):
        # Constructor initialisers: a brace after a name is one member's, after ) or } the body's.
        before = flat_stripped.rstrip()
        return "function" if before.endswith((")", "}")) else "init"
    if FUNCTION_TAIL.search(flat_stripped) or LAMBDA_INTRO.search(flat_stripped):
        return "function"
    if CLASS.search(flat_stripped) and "=" not in flat_stripped.replace("==", ""):
        return "class"
    return "init"


def function_name(head):
    flat = collapse_groups(head)
    if LAMBDA_INTRO.search(flat):
        declared = re.search(r"([A-Za-z_]\w*)\s*=\s*\[\]", flat)
        return f"lambda {declared.group(1)}" if declared else "lambda"
    for match in NAME_BEFORE_PARAMS.finditer(flat):
        name = re.sub(r"\s+", "", match.group(1))
        if name.split("::")[-1] not in NOT_NAMES:
            return name
    return flat.strip().split()[-1] if flat.strip() else "?"


def functions(text):
    """(name, first line, length in lines) of each function body in the text, in order."""
    code = blank(text)
    found = []
    stack = []  # (kind, line of the brace, head before it)
    head = []
    line = 1
    function_depth = 0  # braces open inside the current function body (0: not in a function)
    skip_depth = 0  # braces open inside an enum body or an initialiser at namespace or class scope
    for c in code:
        if c == "\n":
            line += 1
        if function_depth:
            if c == "{":
                function_depth += 1
            elif c == "}":
                function_depth -= 1
                if function_depth == 0:
                    name, start = stack.pop()
                    found.append((name, start, line - start + 1))
                    head = []
            continue
        if skip_depth:
            if c == "{":
                skip_depth += 1
            elif c == "}":
                skip_depth -= 1
                if skip_depth == 0:
                    kind = stack.pop()[0]
                    head = [] if kind == "enum" else head + ["{}"]
            continue
        if c == "{":
            text_before = "".join(head)
            kind = classify(text_before)
            if kind == "function":
                stack.append((function_name(text_before), line))
                function_depth = 1
            elif kind in ("enum", "init"):
                stack.append((kind, line))
                skip_depth = 1
            else:
                stack.append((kind, line))
                head = []
        elif c == "}":
            if stack:
                stack.pop()
            head = []
        elif c == ";" and _balanced("".join(head)):
            head = []
        else:
            head.append(c)
    return found


def _balanced(head):
    return head.count("(") == head.count(")")


def source_files(root):
    return sorted(p for top in SCANNED if (root / top).is_dir()
                  for p in (root / top).rglob("*") if p.suffix in SOURCE_SUFFIXES and p.is_file())


def check(root):
    findings = []
    files = source_files(root)
    for path in files:
        relative = path.relative_to(root)
        text = path.read_text(encoding="utf-8", errors="replace")
        lines = len(text.splitlines())
        if lines > MAX_FILE_LINES:
            findings.append(f"{relative}: {lines} lines (limit {MAX_FILE_LINES})")
        for name, start, length in functions(text):
            if length > MAX_FUNCTION_LINES:
                findings.append(f"{relative}:{start}: function {name} is {length} lines "
                                f"(limit {MAX_FUNCTION_LINES})")
    return files, findings


def main(argv):
    if len(argv) > 1 and argv[1] == "--list":
        for name in argv[2:]:
            for function, start, length in functions(pathlib.Path(name).read_text(encoding="utf-8")):
                print(f"{name}:{start}: {function} {length}")
        return 0
    root = pathlib.Path(argv[1] if len(argv) > 1 else pathlib.Path(__file__).resolve().parents[2])
    print(f"size limits: files at most {MAX_FILE_LINES} lines, functions at most {MAX_FUNCTION_LINES} lines "
          f"(opening to closing brace of the body), in {', '.join(d + '/' for d in SCANNED)}")
    files, findings = check(root)
    for finding in findings:
        print(finding)
    print(f"{len(files)} files checked, {len(findings)} over the limits")
    return 1 if findings else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
