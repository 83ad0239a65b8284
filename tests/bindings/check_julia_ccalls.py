#!/usr/bin/env python3
"""Checks every ccall of the Julia binding against the prototypes of ellipsa.h.

  check_julia_ccalls.py [--header-dir DIR] [--julia FILE] [--cc CC]

No Julia runtime is needed (none is packaged for Debian 12): the Julia file is
read as text, the header as the compiler sees it (abi/abi_record.py: the
preprocessed declarations and the struct layouts measured by a compiled C
program). For every `ccall((:name, libellipsa), Ret, (T1, ..., Tk), a1, ..., ak)`:
  - the name must be a literal symbol of a function declared in ellipsa.h, and
    the library the constant `libellipsa`;
  - k must equal the number of parameters of the prototype, and the call must
    pass k arguments;
  - each Ti and Ret must be a Julia type that carries the C type
    (int32_t: Int32/Cint; double: Cdouble/Float64; T *: Ptr{T}/Ref{T};
    const char *: Cstring/Ptr{UInt8}; a handle: Ptr{Cvoid}; a handle's
    address: Ref{Ptr{Cvoid}}; a public struct: Ref/Ptr of a Julia struct whose
    fields have the C struct's offsets, sizes and types; typedefs resolved);
  - a ccall that cannot be read this way (a computed name or type tuple) fails:
    every call must be checkable.
Every `@cfunction(f, Ret, (T...))` must match a function-pointer typedef of the
header. Exit status 0 when all match, 1 with one line per mismatch, 2 on usage.
"""
import argparse
import os
import re
import sys
import tempfile

ROOT = os.path.normpath(os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", ".."))
sys.path.insert(0, os.path.join(ROOT, "abi"))
import abi_record  # noqa: E402  (the header as the compiler parses it)

# Julia's C aliases on x86-64 Linux (Base: ctypes.jl), to their canonical types.
ALIASES = {"Cdouble": "Float64", "Cfloat": "Float32", "Cint": "Int32", "Cuint": "UInt32",
           "Clonglong": "Int64", "Culonglong": "UInt64", "Clong": "Int64", "Culong": "UInt64",
           "Cshort": "Int16", "Cushort": "UInt16", "Cchar": "Int8", "Cuchar": "UInt8",
           "Csize_t": "UInt64", "Cssize_t": "Int64", "Cvoid": "Nothing", "Cptrdiff_t": "Int64"}
C_SCALARS = {"double": {"Float64"}, "float": {"Float32"}, "int32_t": {"Int32"}, "int64_t": {"Int64"},
             "uint32_t": {"UInt32"}, "uint64_t": {"UInt64"}, "int": {"Int32"}, "size_t": {"UInt64"},
             "char": {"UInt8", "Int8"}, "void": {"Nothing"}}
JULIA_SIZES = {"Float64": 8, "Int64": 8, "UInt64": 8, "Float32": 4, "Int32": 4, "UInt32": 4,
               "Int16": 2, "UInt16": 2, "Int8": 1, "UInt8": 1, "Bool": 1, "Cstring": 8}


# ---- the header ----------------------------------------------------------------------
class Header:
    def __init__(self, header_dir, cc):
        with tempfile.TemporaryDirectory() as work:
            text = abi_record.header_text_after_preprocessor(header_dir, cc, work)
            lines, structs = abi_record.parse_declarations(text)
            layout = abi_record.measure(header_dir, cc, work, structs, {})
        self.functions = {}      # name -> (return type, [parameter types])
        self.fn_typedefs = {}    # name -> (return type, [parameter types])
        self.aliases = {}        # typedef name -> C type
        self.opaque = set()      # typedef names of opaque structs
        self.structs = {}        # name -> {"size": n, "fields": [(name, offset, size, ctype)]}
        for line in lines:
            if line.startswith("function "):
                name, sig = line[len("function "):].split(" : ", 1)
                self.functions[name] = split_signature(sig, name)
            elif line.startswith("typedef ") and " ( * ) " in line:
                name = line.split()[1]
                ret, params = line[len("typedef %s " % name):].split(" ( * ) ", 1)
                self.fn_typedefs[name] = (ret, [p.strip() for p in params.strip()[2:-2].split(" , ")])
            elif line.startswith("typedef ") and " = " in line:
                name, target = line[len("typedef "):].split(" = ", 1)
                if target.startswith("struct "):
                    self.opaque.add(name)
                else:
                    self.aliases[name] = target
            elif line.startswith("typedef struct "):
                self.structs[line.split()[-1]] = {"size": None, "fields": []}
        for line in layout:
            m = re.match(r"struct (\w+) size=(\d+)", line)
            if m and m.group(1) in self.structs:
                self.structs[m.group(1)]["size"] = int(m.group(2))
            m = re.match(r"field (\w+)\.(\w+) offset=(\d+) size=(\d+) type=(.*)$", line)
            if m and m.group(1) in self.structs:
                self.structs[m.group(1)]["fields"].append(
                    (m.group(2), int(m.group(3)), int(m.group(4)), m.group(5).strip()))
        for s in self.structs.values():
            s["fields"].sort(key=lambda f: f[1])


def split_signature(sig, name):
    head, params = sig.split(" ( ", 1)
    ret = head[:-len(name)].strip()
    params = params.rsplit(" )", 1)[0].strip()
    plist = [] if params in ("void", "") else [p.strip() for p in params.split(" , ")]
    return ret, plist


# ---- the Julia file ----------------------------------------------------------------------
def blank_comments_and_strings(src):
    """Comments become spaces and string contents disappear (quotes kept); newlines stay."""
    out, i, n = [], 0, len(src)
    while i < n:
        if src.startswith("#=", i):
            j = src.find("=#", i + 2)
            j = n if j < 0 else j + 2
            out.append(re.sub(r"[^\n]", " ", src[i:j]))
            i = j
        elif src[i] == "#":
            j = src.find("\n", i)
            j = n if j < 0 else j
            out.append(" " * (j - i))
            i = j
        elif src.startswith('"""', i):
            j = src.find('"""', i + 3)
            j = n if j < 0 else j + 3
            out.append('""' + "\n" * src[i:j].count("\n"))
            i = j
        elif src[i] == '"':
            j = i + 1
            while j < n and src[j] != '"':
                j += 2 if src[j] == "\\" else 1
            out.append('""' + "\n" * src[i:j].count("\n"))
            i = j + 1
        else:
            out.append(src[i])
            i += 1
    return "".join(out)


def balanced(text, open_at):
    """The text inside the parenthesis that opens at open_at, and the index after it."""
    depth = 0
    for i in range(open_at, len(text)):
        if text[i] in "([{":
            depth += 1
        elif text[i] in ")]}":
            depth -= 1
            if depth == 0:
                return text[open_at + 1:i], i + 1
    raise ValueError("unbalanced parenthesis")


def split_top(text):
    parts, cur, depth = [], [], 0
    for ch in text:
        if ch in "([{":
            depth += 1
        elif ch in ")]}":
            depth -= 1
        if ch == "," and depth == 0:
            parts.append("".join(cur).strip())
            cur = []
        else:
            cur.append(ch)
    last = "".join(cur).strip()
    if last:
        parts.append(last)
    return parts


def normalise(jtype):
    t = re.sub(r"\s+", "", jtype)
    return re.sub(r"\b(" + "|".join(ALIASES) + r")\b", lambda m: ALIASES[m.group(1)], t)


def julia_structs(src):
    """struct Name ... end blocks: [(field, type)] in order (isbits fields only)."""
    found = {}
    for m in re.finditer(r"^\s*struct\s+(\w+)\s*\n(.*?)^\s*end\b", src, flags=re.S | re.M):
        fields = []
        for line in m.group(2).splitlines():
            fm = re.match(r"\s*(\w+)::(\S+)\s*$", line)
            if fm:
                fields.append((fm.group(1), normalise(fm.group(2))))
        found[m.group(1)] = fields
    return found


def julia_size(t):
    if t.startswith("Ptr{") or t.startswith("Ref{"):
        return 8
    return JULIA_SIZES.get(t)


def julia_layout(fields):
    """Offsets with C alignment (isbits Julia structs are laid out as C structs)."""
    out, offset, align_max = [], 0, 1
    for name, t in fields:
        size = julia_size(t)
        if size is None:
            return None
        offset = (offset + size - 1) // size * size
        out.append((name, offset, size, t))
        offset += size
        align_max = max(align_max, size)
    return out, (offset + align_max - 1) // align_max * align_max


# ---- matching ----------------------------------------------------------------------------------
class Checker:
    def __init__(self, header, jstructs):
        self.h = header
        self.jstructs = jstructs
        self.struct_notes = {}

    def resolve(self, ctype):
        toks = [t for t in ctype.split() if t != "const"]
        stars = 0
        while toks and toks[-1] == "*":
            toks.pop()
            stars += 1
        base = " ".join(toks)
        while base in self.h.aliases:
            inner = [t for t in self.h.aliases[base].split() if t != "const"]
            while inner and inner[-1] == "*":
                inner.pop()
                stars += 1
            base = " ".join(inner)
        return base, stars

    def forms(self, ctype, allow_ref=True):
        """Julia types (normalised) that carry this C type."""
        base, stars = self.resolve(ctype)
        if base in self.h.fn_typedefs:
            base, stars = "void", stars + 1
        if stars == 0:
            if base in C_SCALARS:
                return set(C_SCALARS[base])
            return {j for j in self.jstructs if self.struct_matches(j, base)}
        if stars == 1:
            if base == "void" or base in self.h.opaque:
                inner = None
                out = {"Ptr{Nothing}"}
            elif base == "char":
                return {"Cstring", "Ptr{UInt8}", "Ptr{Int8}"}
            else:
                inner = self.forms(base, allow_ref)
                out = {"Ptr{%s}" % t for t in inner}
                if allow_ref:
                    out |= {"Ref{%s}" % t for t in inner}
            return out
        inner = self.forms(" ".join([base] + ["*"] * (stars - 1)), False)
        out = {"Ptr{%s}" % t for t in inner}
        if allow_ref:
            out |= {"Ref{%s}" % t for t in inner}
        return out

    def struct_matches(self, jname, cname):
        if cname not in self.h.structs:
            return False
        key = (jname, cname)
        if key in self.struct_notes:
            return not self.struct_notes[key]
        self.struct_notes[key] = []  # provisional, for recursion
        notes = []
        layout = julia_layout(self.jstructs[jname])
        c = self.h.structs[cname]
        if layout is None:
            notes.append("%s has a field type of unknown size" % jname)
        else:
            fields, size = layout
            if len(fields) != len(c["fields"]):
                notes.append("%s has %d fields, %s has %d" % (jname, len(fields), cname, len(c["fields"])))
            for jf, cf in zip(fields, c["fields"]):
                if jf[1] != cf[1] or jf[2] != cf[2]:
                    notes.append("%s.%s at offset %d (%d bytes), %s.%s at offset %d (%d bytes)"
                                 % (jname, jf[0], jf[1], jf[2], cname, cf[0], cf[1], cf[2]))
                elif jf[3] not in self.forms(cf[3], allow_ref=False):
                    notes.append("%s.%s::%s does not carry %s.%s (%s)" % (jname, jf[0], jf[3], cname, cf[0], cf[3]))
            if c["size"] is not None and size != c["size"]:
                notes.append("sizeof %s is %d, %s is %d bytes" % (jname, size, cname, c["size"]))
        self.struct_notes[key] = notes
        return not notes

    def explain(self, ctype, jtype):
        """Why jtype does not carry ctype (struct layouts named)."""
        base, _ = self.resolve(ctype)
        inner = re.sub(r"^(Ref|Ptr)\{(\w+)\}$", r"\2", jtype)
        if inner in self.jstructs and base in self.h.structs:
            self.struct_matches(inner, base)
            notes = self.struct_notes.get((inner, base))
            if notes:
                return "; ".join(notes)
        known = sorted(self.forms(ctype))
        return "expected one of " + ", ".join(known) if known else "no Julia type carries it here"


def check_file(julia_path, header):
    raw = open(julia_path, encoding="utf-8").read()
    src = blank_comments_and_strings(raw)
    checker = Checker(header, julia_structs(src))
    problems, seen = [], []

    def where(pos):
        return "%s:%d" % (os.path.basename(julia_path), src.count("\n", 0, pos) + 1)

    for m in re.finditer(r"\bccall\s*\(", src):
        at = where(m.start())
        try:
            inside, _ = balanced(src, m.end() - 1)
        except ValueError:
            problems.append("%s: ccall with unbalanced parentheses" % at)
            continue
        parts = split_top(inside)
        if len(parts) < 3:
            problems.append("%s: ccall with fewer than three arguments" % at)
            continue
        target = re.fullmatch(r"\(\s*:(\w+)\s*,\s*(\w+)\s*\)", parts[0])
        if not target:
            problems.append("%s: ccall target %r is not (:literal_name, libellipsa); it cannot be checked"
                            % (at, parts[0]))
            continue
        name, lib = target.groups()
        if lib != "libellipsa":
            problems.append("%s: %s is called in %r, not libellipsa" % (at, name, lib))
        if name not in header.functions:
            problems.append("%s: %s is not declared in ellipsa.h" % (at, name))
            continue
        ret_c, params_c = header.functions[name]
        tuple_text = parts[2].strip()
        if not (tuple_text.startswith("(") and tuple_text.endswith(")")):
            problems.append("%s: %s: the argument types %r are not a literal tuple; they cannot be checked"
                            % (at, name, tuple_text))
            continue
        types = split_top(tuple_text[1:-1])
        args = parts[3:]
        seen.append(name)
        if len(types) != len(params_c):
            problems.append("%s: %s takes %d arguments in ellipsa.h (%s), the ccall declares %d"
                            % (at, name, len(params_c), ", ".join(params_c) or "void", len(types)))
        if len(args) != len(types):
            problems.append("%s: %s declares %d argument types but passes %d arguments"
                            % (at, name, len(types), len(args)))
        ret_j = normalise(parts[1])
        if ret_j not in checker.forms(ret_c, allow_ref=False):
            problems.append("%s: %s returns %s in ellipsa.h; the ccall says %s (%s)"
                            % (at, name, ret_c, parts[1].strip(), checker.explain(ret_c, ret_j)))
        for i, (jt, ct) in enumerate(zip(types, params_c), start=1):
            if normalise(jt) not in checker.forms(ct):
                problems.append("%s: %s argument %d is %s in ellipsa.h; the ccall passes %s (%s)"
                                % (at, name, i, ct, jt, checker.explain(ct, normalise(jt))))

    for m in re.finditer(r"@cfunction\s*\(", src):
        at = where(m.start())
        parts = split_top(balanced(src, m.end() - 1)[0])
        if len(parts) != 3 or not (parts[2].startswith("(") and parts[2].endswith(")")):
            problems.append("%s: @cfunction that cannot be read" % at)
            continue
        ret_j, types = normalise(parts[1]), [normalise(t) for t in split_top(parts[2][1:-1])]
        fits = [n for n, (r, ps) in header.fn_typedefs.items()
                if len(ps) == len(types) and ret_j in checker.forms(r, False)
                and all(t in checker.forms(c) for t, c in zip(types, ps))]
        if not fits:
            problems.append("%s: @cfunction(%s, %s, %s) matches no callback type of ellipsa.h (%s)"
                            % (at, parts[0], parts[1], parts[2],
                               "; ".join("%s: %s (*)(%s)" % (n, r, ", ".join(ps))
                                         for n, (r, ps) in sorted(header.fn_typedefs.items()))))
        else:
            seen.append("callback " + fits[0])
    return seen, problems


def main(argv):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--header-dir", default=os.path.join(ROOT, "capi", "include"))
    ap.add_argument("--julia", default=os.path.join(ROOT, "bindings-c", "julia", "Ellipsa.jl"))
    ap.add_argument("--cc", default=os.environ.get("CC", "cc"))
    a = ap.parse_args(argv)
    header = Header(a.header_dir, a.cc)
    if not header.functions:
        print("no functions found in %s/ellipsa.h" % a.header_dir)
        return 2
    seen, problems = check_file(a.julia, header)
    if not seen:
        print("no ccall found in %s" % a.julia)
        return 1
    for p in problems:
        print("MISMATCH " + p)
    print("%d ccalls and callbacks of %s (%d distinct C functions) checked against %s/ellipsa.h: %d mismatches"
          % (len(seen), os.path.basename(a.julia), len(set(seen)), a.header_dir, len(problems)))
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
