"""Lists the longest functions in src/ and fails when one is longer than the limit.

Usage: python3 scripts/function-lengths.py [LIMIT=120] [SHOW=10]
The sources are clang-formatted, so a function defined at namespace scope starts on a line at
column 0 and ends at the next line that is exactly "}"; its length is the count of lines from its
first line to that brace. Class, struct, enum, namespace and extern blocks are not functions.
"""
import pathlib
import re
import sys

limit = int(sys.argv[1]) if len(sys.argv) > 1 else 120
show = int(sys.argv[2]) if len(sys.argv) > 2 else 10
root = pathlib.Path(__file__).resolve().parent.parent
not_function = re.compile(r"^(namespace|class|struct|enum|union|extern|template\s*<[^>]*>\s*(class|struct))\b")
found = []
for path in sorted((root / "src").rglob("*.[ch]pp")):
    lines = path.read_text().split("\n")
    start = None
    for i, line in enumerate(lines):
        if start is None:
            # "template <...>" alone on its line heads whatever the next line declares
            head = lines[i + 1] if re.match(r"^template\s*<.*>\s*$", line) and i + 1 < len(lines) else line
            if line and not line[0].isspace() and line[0] not in "#/}" and not not_function.match(head):
                # a definition: the signature (possibly over several lines) ends with "{" before any ";"
                j = i
                while j < len(lines) and not lines[j].rstrip().endswith("{") and ";" not in lines[j]:
                    j += 1
                if j < len(lines) and lines[j].rstrip().endswith("{") and "=" not in lines[i].split("(")[0]:
                    start = i
        elif line == "}" or line.startswith("}  //"):
            name = re.sub(r"\s+", " ", lines[start].split("(")[0]).strip()
            found.append((i - start + 1, f"{path.relative_to(root)}:{start + 1}", name))
            start = None
found.sort(reverse=True)
print(f"longest functions in src/ (limit {limit} lines):")
for length, where, name in found[:show]:
    print(f"  {length:4d}  {where}  {name}")
over = [f for f in found if f[0] > limit]
if over:
    print(f"{len(over)} function(s) over {limit} lines: split them into named steps")
    sys.exit(1)
