#!/usr/bin/env python3
"""The public ABI of ellipsa as a plain, sorted text record, and its comparison.

  abi_record.py record HEADER_DIR LIBRARY CC > record.txt
  abi_record.py compare REFERENCE CURRENT
  abi_record.py acc-summary REPORT.xml   (abi-compliance-checker's problems, one a line)

`record` reads what the compiler sees, not the header's text:
  - function / inline / typedef lines: every declaration of ellipsa.h after the
    preprocessor (`CC -E`, keeping only lines that come from ellipsa.h), as
    canonical tokens with parameter names dropped (renaming a parameter changes
    nothing for a caller);
  - struct and field lines: sizeof, alignment, offsetof and sizeof of every
    field of every public struct, measured by compiling and running a small C
    program with CC;
  - macro lines: the value of every ELLIPSA_ macro, evaluated by the same
    program (initialiser macros are recorded as normalised text);
  - symbol lines: the ellipsa_ names the shared library exports (nm -D);
    "unexported" lines name declared functions the library lacks (always a
    failure).

`compare` fails (exit 1) when a recorded line changed or disappeared, and
reports added lines. Two relaxations, the documented way of growing a struct:
a struct whose first field is `int64_t struct_size` may grow (its size line may
increase) as long as all recorded fields keep their offset, size and type; and
an initialiser macro (`{ ... }`) may gain elements at its end.
The version macros are reported but never fail the comparison.
"""
import os
import re
import subprocess
import sys
import tempfile

HEADER = "ellipsa.h"
TOKEN = re.compile(r"[A-Za-z_][A-Za-z0-9_]*|\d[\w.]*|\S")
C_KEYWORDS = {"const", "volatile", "restrict", "int", "long", "short", "char", "double", "float",
              "unsigned", "signed", "void", "struct", "_Bool"}
# Version macros change with every release; they are recorded for information.
INFORMATIONAL_MACROS = {"ELLIPSA_VERSION_MAJOR", "ELLIPSA_VERSION_MINOR", "ELLIPSA_VERSION_PATCH",
                        "ELLIPSA_VERSION_NUMBER"}
# Macros without a value that belong to the header's mechanics, not its API.
MECHANICS_MACROS = {"ELLIPSA_H", "ELLIPSA_API"}


def run(cmd, **kw):
    return subprocess.run(cmd, check=True, capture_output=True, text=True, **kw).stdout


def header_text_after_preprocessor(header_dir, cc, workdir):
    probe = os.path.join(workdir, "probe.c")
    with open(probe, "w") as f:
        f.write('#include "%s"\n' % HEADER)
    out = run([cc, "-std=c99", "-E", "-I", header_dir, probe])
    keep, current = [], ""
    for line in out.splitlines():
        m = re.match(r'#\s*\d+\s+"([^"]*)"', line)
        if m:
            current = os.path.basename(m.group(1))
            continue
        if current == HEADER:
            keep.append(line)
    return "\n".join(keep)


def tokens(text):
    return TOKEN.findall(text)


def top_level_declarations(text):
    """Splits into declarations at ';' outside braces; a function body ends one too."""
    decls, cur, depth = [], [], 0
    for tok in tokens(text):
        cur.append(tok)
        if tok == "{":
            depth += 1
        elif tok == "}":
            depth -= 1
            if depth == 0 and "typedef" not in cur and "struct" != cur[0]:
                decls.append(cur)  # an inline function definition
                cur = []
        elif tok == ";" and depth == 0:
            decls.append(cur)
            cur = []
    return decls


def split_params(toks):
    params, cur, depth = [], [], 0
    for t in toks:
        if t in "([":
            depth += 1
        elif t in ")]":
            depth -= 1
        if t == "," and depth == 0:
            params.append(cur)
            cur = []
        else:
            cur.append(t)
    if cur:
        params.append(cur)
    return params


def drop_name(param):
    """`const double *data` -> `const double *`; `void` stays."""
    if len(param) >= 2 and re.match(r"[A-Za-z_]\w*$", param[-1]) and param[-1] not in C_KEYWORDS:
        return param[:-1]
    return param


def canonical_signature(toks):
    """Return type, name and parameter types of `ret name ( params )`."""
    open_at = toks.index("(")
    # A function-pointer typedef: typedef ret ( * name ) ( params )
    if toks[open_at + 1] == "*":
        close = toks.index(")", open_at)
        name = toks[close - 1]
        head = toks[:open_at] + ["(", "*", ")"]
        rest = toks[close + 1:]
        open_at2 = rest.index("(")
        params = rest[open_at2 + 1:len(rest) - 1 - rest[::-1].index(")") + 0]
        params = [" ".join(drop_name(p)) for p in split_params(params)]
        return name, " ".join(head) + " ( " + " , ".join(params) + " )"
    name = toks[open_at - 1]
    depth, close = 0, None
    for i in range(open_at, len(toks)):
        if toks[i] == "(":
            depth += 1
        elif toks[i] == ")":
            depth -= 1
            if depth == 0:
                close = i
                break
    params = [" ".join(drop_name(p)) for p in split_params(toks[open_at + 1:close])]
    ret = " ".join(toks[:open_at - 1])
    return name, "%s %s ( %s )" % (ret, name, " , ".join(params))


def parse_declarations(text):
    lines, structs = [], {}
    for d in top_level_declarations(text):
        if d[-1] == ";":
            d = d[:-1]
        if not any(t.startswith("ellipsa_") for t in d):
            continue
        if d[0] == "typedef" and d[1] == "struct" and "{" in d:
            name = d[2]
            body = d[d.index("{") + 1:len(d) - 1 - d[::-1].index("}")]
            fields, cur = [], []
            for t in body:
                if t == ";":
                    fields.append((cur[-1], " ".join(cur[:-1])))
                    cur = []
                else:
                    cur.append(t)
            structs[name] = fields
            lines.append("typedef struct %s { ... } %s" % (name, d[-1]))
        elif d[0] == "typedef" and "(" in d:
            name, sig = canonical_signature(d[1:])
            lines.append("typedef %s %s" % (name, sig))
        elif d[0] == "typedef":
            lines.append("typedef %s = %s" % (d[-1], " ".join(d[1:-1])))
        elif d[0] == "static":
            name, sig = canonical_signature(d[:d.index("{")] if "{" in d else d)
            lines.append("inline %s : %s" % (name, sig))
        else:
            name, sig = canonical_signature(d)
            lines.append("function %s : %s" % (name, sig))
    return lines, structs


def macros(header_dir, cc, workdir):
    probe = os.path.join(workdir, "probe.c")
    out = run([cc, "-std=c99", "-dM", "-E", "-I", header_dir, probe])
    found = {}
    for line in out.splitlines():
        m = re.match(r"#define (ELLIPSA_\w+)(\(.*?\))?\s*(.*)$", line)
        if m and m.group(1) not in MECHANICS_MACROS:
            found[m.group(1)] = (m.group(2), m.group(3).strip())
    return found


def measure(header_dir, cc, workdir, structs, macro_defs):
    """Compiles and runs a C program printing layouts and macro values."""
    src = ['#include <stdio.h>', '#include <stddef.h>', '#include "%s"' % HEADER, "int main(void) {"]
    for s, fields in sorted(structs.items()):
        src.append('printf("struct %s size=%%zu align=%%zu\\n", sizeof(%s), _Alignof(%s));' % (s, s, s))
        for name, typ in fields:
            src.append('printf("field %s.%s offset=%%zu size=%%zu type=%s\\n", offsetof(%s, %s), '
                       'sizeof(((%s *)0)->%s));' % (s, name, typ, s, name, s, name))
    text_lines = []
    for name, (args, body) in sorted(macro_defs.items()):
        if args is not None or body.startswith("{"):
            text_lines.append("macro %s%s = %s" % (name, args or "", " ".join(tokens(body))))
        else:
            src.append('printf("macro %s = %%lld\\n", (long long)(%s));' % (name, name))
    src.append("return 0; }")
    c_file = os.path.join(workdir, "measure.c")
    exe = os.path.join(workdir, "measure")
    with open(c_file, "w") as f:
        f.write("\n".join(src) + "\n")
    run([cc, "-std=c11", "-I", header_dir, c_file, "-o", exe])
    return run([exe]).splitlines() + text_lines


def exported_symbols(library):
    out = run(["nm", "-D", "--defined-only", library])
    names = []
    for line in out.splitlines():
        parts = line.split()
        if len(parts) >= 3 and parts[2].startswith("ellipsa_"):
            names.append("symbol %s %s" % (parts[2].split("@")[0], parts[1]))
    return names


def record(header_dir, library, cc):
    with tempfile.TemporaryDirectory() as workdir:
        text = header_text_after_preprocessor(header_dir, cc, workdir)
        decl_lines, structs = parse_declarations(text)
        lines = decl_lines + measure(header_dir, cc, workdir, structs, macros(header_dir, cc, workdir))
    if library:
        syms = exported_symbols(library)
        lines += syms
        exported = {s.split()[1] for s in syms}
        declared = {l.split()[1] for l in decl_lines if l.startswith("function ")}
        # A declared function that the library does not export fails compare.
        lines += ["unexported %s" % name for name in sorted(declared - exported)]
    return sorted(set(lines))


def key(line):
    """What identifies a record line, so a change shows as 'changed', not as gone + added."""
    if line.startswith(("struct ", "macro ")):
        return line.split(" = ")[0].split(" size=")[0]
    if line.startswith("field "):
        return line.split(" offset=")[0]
    if line.startswith(("function ", "inline ")):
        return line.split(" : ")[0]
    if line.startswith("typedef "):
        return " ".join(line.split()[:3]) if "{" in line else " ".join(line.split()[:2])
    return line


def growable(struct_name, lines):
    return any(l.startswith("field %s.struct_size offset=0 size=8 type=int64_t" % struct_name) for l in lines)


def compare(ref_path, cur_path):
    ref = [l.rstrip("\n") for l in open(ref_path) if l.strip() and not l.startswith("#")]
    cur = [l.rstrip("\n") for l in open(cur_path) if l.strip() and not l.startswith("#")]
    ref_by_key = {key(l): l for l in ref}
    cur_by_key = {key(l): l for l in cur}
    failures, notes = [], []
    for k, old in sorted(ref_by_key.items()):
        new = cur_by_key.get(k)
        if new == old:
            continue
        macro_name = k.split()[1] if k.startswith("macro ") else None
        if new is None:
            failures.append("removed: " + old)
        elif macro_name in INFORMATIONAL_MACROS:
            notes.append("version: %s  (was: %s)" % (new, old))
        elif macro_name and old.endswith(" }") and new.startswith(old[:-2] + " , "):
            notes.append("initialiser grown at the end: %s" % new)
        elif k.startswith("struct ") and growable(k.split()[1], ref):
            old_size = int(re.search(r"size=(\d+)", old).group(1))
            new_size = int(re.search(r"size=(\d+)", new).group(1))
            old_align = re.search(r"align=(\d+)", old).group(1)
            new_align = re.search(r"align=(\d+)", new).group(1)
            if new_size > old_size and old_align == new_align:
                notes.append("grown at the end (struct_size): %s  (was: %s)" % (new, old))
            else:
                failures.append("changed: %s\n      was: %s" % (new, old))
        else:
            failures.append("changed: %s\n      was: %s" % (new, old))
    for k in sorted(cur_by_key):
        if k.startswith("unexported "):
            failures.append("declared in %s but not exported by the library: %s" % (HEADER, k.split()[1]))
    added = [cur_by_key[k] for k in sorted(set(cur_by_key) - set(ref_by_key)) if not k.startswith("unexported ")]
    for a in added:
        notes.append("added: " + a)
    for n in notes:
        print("abi: " + n)
    for f in failures:
        print("abi: INCOMPATIBLE " + f)
    print("abi: %d recorded items checked, %d incompatible, %d added" % (len(ref_by_key), len(failures), len(added)))
    return 1 if failures else 0


def acc_summary(xml_path):
    """One line per problem of an abi-compliance-checker XML report."""
    import xml.etree.ElementTree as ET
    root = ET.parse(xml_path).getroot()
    for sym in root.iter("removed_symbols"):
        for name in sym.iter("name"):
            print("  removed symbol: %s" % name.text)
    for group in root:
        if not group.tag.startswith("problems_with_"):
            continue
        severity = group.get("severity", "")
        for owner in group.iter():
            if owner.tag not in ("symbol", "type") or owner.get("name") is None:
                continue
            for problem in owner.findall("problem"):
                for change in problem.findall("change"):
                    text = change.text or ""
                    for attr, value in change.attrib.items():
                        text = text.replace("@" + attr, value)
                    print("  %s %s %s: %s" % (severity.lower(), owner.tag, owner.get("name"), text.strip()))
    return 0


def main(argv):
    if len(argv) == 5 and argv[1] == "record":
        lib = argv[3] if argv[3] != "-" else None
        print("# ellipsa public ABI record: written by scripts/check-abi.sh --update; do not edit by hand.")
        print("\n".join(record(argv[2], lib, argv[4])))
        return 0
    if len(argv) == 3 and argv[1] == "acc-summary":
        return acc_summary(argv[2])
    if len(argv) == 4 and argv[1] == "compare":
        return compare(argv[2], argv[3])
    sys.stderr.write(__doc__)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
