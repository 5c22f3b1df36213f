"""Layering: a file of one stage includes headers of its own stage and of earlier stages only.

The stages run in one direction (DEVELOPERS.md, "How data flows"). A file belongs to the stage
of its folder: src/<stage>/ and include/loopaudit/<stage>/ are the same stage; the top-level
headers include/loopaudit/{error,units,format,names}.hpp belong to the first stage. An include
"loopaudit/<stage>/..." (public) or "<stage>/..." (private to src/) belongs to that stage; a
bare name next to the including file ("crossings.hpp") to the file's own stage.

It also fails when two headers declare a type of one name at namespace level: two stages'
loopaudit::detail::Crossing, say, break the one-definition rule, and the linker may then hand one
stage's vector<Crossing> code the other's layout (a heap overflow only some builds show).

Prints the order it checks, then one line per violation; exits 1 if there is any.
Usage: check_layers.py [PROJECT_ROOT]   (default: two folders above this script)
"""
import pathlib
import re
import sys

STAGES = ["record", "fft", "ingest", "excitation", "spectral", "loop", "analysis", "model", "verdict",
          "pipeline", "synth", "report", "config", "cli"]
BASE_STAGE = STAGES[0]
BASE_HEADERS = {"error.hpp", "units.hpp", "format.hpp", "names.hpp"}
SOURCE_SUFFIXES = {".hpp", ".cpp", ".h", ".cc", ".hh", ".ipp", ".inl"}

INCLUDE = re.compile(r'^\s*#\s*include\s*(?:"([^"]+)"|<(loopaudit/[^>]+)>)')
# A type declared at namespace level: at the start of a line (nested types are indented).
TYPE = re.compile(r"^(?:struct|class)\s+([A-Za-z_]\w*)\s*(?:final\s*)?(?::[^;{]*)?\{")


def stage_of_file(relative):
    """The stage of a file under src/ or include/loopaudit/, or None with the folder it is in."""
    parts = relative.parts
    inner = parts[2:] if parts[:2] == ("include", "loopaudit") else parts[1:]
    if len(inner) == 1:
        if parts[0] == "include" and inner[0] in BASE_HEADERS:
            return BASE_STAGE, None
        return None, "/".join(parts[:-1]) + "/"
    return (inner[0], None) if inner[0] in STAGES else (None, "/".join(parts[:-1]) + "/")


def stage_of_include(header, including_file):
    """The stage an included header belongs to, or None if it names no known stage."""
    parts = pathlib.PurePosixPath(header).parts
    if parts and parts[0] == "loopaudit":
        parts = parts[1:]
        if len(parts) == 1:
            return BASE_STAGE if parts[0] in BASE_HEADERS else None
    elif len(parts) == 1 and (including_file.parent / header).is_file():
        return "same"
    if len(parts) >= 2 and parts[0] in STAGES:
        return parts[0]
    return None


def check(root):
    violations = []
    files = sorted(p for top in (root / "src", root / "include" / "loopaudit") if top.is_dir()
                   for p in top.rglob("*") if p.suffix in SOURCE_SUFFIXES and p.is_file())
    for path in files:
        relative = path.relative_to(root)
        own, folder = stage_of_file(relative)
        if own is None:
            violations.append(f"{relative}: the folder {folder} is not a known stage")
            continue
        text = path.read_text(encoding="utf-8", errors="replace")
        for number, line in enumerate(text.splitlines(), start=1):
            match = INCLUDE.match(line)
            if not match:
                continue
            header = match.group(1) or match.group(2)
            stage = stage_of_include(header, path)
            if stage == "same":
                continue
            if stage is None:
                violations.append(f'{relative}:{number}: includes "{header}", which is in no known stage '
                                  f"(from stage {own})")
            elif STAGES.index(stage) > STAGES.index(own):
                violations.append(f'{relative}:{number}: includes "{header}" of stage {stage} '
                                  f"(position {STAGES.index(stage) + 1}) from stage {own} "
                                  f"(position {STAGES.index(own) + 1}): a later stage")
    violations += same_type_twice(root, [p for p in files if p.suffix == ".hpp"])
    return files, violations


def same_type_twice(root, headers):
    """One line for each type name that two headers declare at namespace level."""
    where = {}
    for path in headers:
        for number, line in enumerate(path.read_text(encoding="utf-8", errors="replace").splitlines(), start=1):
            match = TYPE.match(line)
            if match:
                where.setdefault(match.group(1), []).append(f"{path.relative_to(root)}:{number}")
    return [f"type {name} is declared in {' and in '.join(places)}: one name, one type (rename one)"
            for name, places in sorted(where.items()) if len(places) > 1]


def main():
    root = pathlib.Path(sys.argv[1] if len(sys.argv) > 1 else pathlib.Path(__file__).resolve().parents[2])
    print("stage order (a file may include its own stage and earlier ones):")
    print("  " + " < ".join(STAGES))
    print(f"  ({BASE_STAGE} also holds include/loopaudit/{', '.join(sorted(BASE_HEADERS))})")
    files, violations = check(root)
    for line in violations:
        print(line)
    print(f"{len(files)} files checked, {len(violations)} violation(s)")
    return 1 if violations else 0


if __name__ == "__main__":
    sys.exit(main())
