#!/usr/bin/env python3
"""Makes the LibreOffice Calc extension (ellipsa-calc.oxt) from the library's
own function catalog.

    make_calc_addin.py LIBRARY UNOIDL_WRITE OUT_DIR

writes OUT_DIR/ellipsa-calc.oxt holding: the IDL interface generated from the
catalog (one method per function; ranges as sequence<sequence<any>> so blanks
stay missing, everything else as `any`) compiled to a type library with
LibreOffice's unoidl-write, the add-in component, the host-neutral bridge, the
catalog as JSON, the shared library, and the manifest and description files.
Standard library only.
"""
import json
import os
import shutil
import subprocess
import sys
import zipfile

HERE = os.path.dirname(os.path.abspath(__file__))
BRIDGE = os.path.join(HERE, "..", "sheet", "ellipsa_sheet.py")
COMPONENT = os.path.join(HERE, "ellipsa_calc.py")
TYPES = ["/usr/lib/libreoffice/program/types.rdb", "/usr/lib/libreoffice/program/types/offapi.rdb"]
RANGE_KIND = 1
SCALAR_SHAPE = 1


def idl(records):
    lines = ["module org { module ellipsa {",
             "  /** ellipsa sheet functions; generated from the library's catalog. */",
             "  interface XSheetFunctions : com::sun::star::uno::XInterface {"]
    for r in records:
        params = []
        for a in r["arguments"]:
            kind = "sequence< sequence< any > >" if a["kind"] == RANGE_KIND and not a["optional"] else "any"
            params.append("[in] %s %s" % (kind, a["name"]))
        # One value: any (a number, or an error raised); arrays: rows of anys.
        result = "any" if r["shape"] == SCALAR_SHAPE else "sequence< sequence< any > >"
        lines.append("    %s %s(%s);" % (result, r["name"].split(".", 1)[1].lower(), ", ".join(params)))
    lines += ["  };", "}; };", ""]
    return "\n".join(lines)


def main(argv):
    if len(argv) != 4:
        sys.stderr.write(__doc__)
        return 2
    library, unoidl_write, out = os.path.abspath(argv[1]), argv[2], os.path.abspath(argv[3])
    stage = os.path.join(out, "oxt")
    shutil.rmtree(stage, ignore_errors=True)
    os.makedirs(os.path.join(stage, "META-INF"))
    sys.path.insert(0, os.path.dirname(BRIDGE))
    import ellipsa_sheet
    lib = ellipsa_sheet.SheetLibrary(library)
    records = ellipsa_sheet.catalog_records(lib)
    version = lib.version()
    lib.close()
    with open(os.path.join(out, "XSheetFunctions.idl"), "w") as f:
        f.write(idl(records))
    subprocess.run([unoidl_write] + TYPES + [os.path.join(out, "XSheetFunctions.idl"),
                                             os.path.join(stage, "ellipsa.rdb")], check=True)
    with open(os.path.join(stage, "catalog.json"), "w") as f:
        json.dump(records, f, indent=1)
    with open(os.path.join(stage, "build_info.json"), "w") as f:
        json.dump({"version": version}, f)
    shutil.copyfile(COMPONENT, os.path.join(stage, "ellipsa_calc.py"))
    shutil.copyfile(BRIDGE, os.path.join(stage, "ellipsa_sheet.py"))
    # Without its debugging sections: the extension is copied into every profile.
    subprocess.run(["objcopy", "--strip-debug", library, os.path.join(stage, "libellipsa.so")], check=True)
    with open(os.path.join(stage, "META-INF", "manifest.xml"), "w") as f:
        f.write("""<?xml version="1.0" encoding="UTF-8"?>
<manifest:manifest xmlns:manifest="http://openoffice.org/2001/manifest">
  <manifest:file-entry manifest:full-path="ellipsa.rdb" manifest:media-type="application/vnd.sun.star.uno-typelibrary;type=RDB"/>
  <manifest:file-entry manifest:full-path="ellipsa_calc.py" manifest:media-type="application/vnd.sun.star.uno-component;type=Python"/>
</manifest:manifest>
""")
    with open(os.path.join(stage, "description.xml"), "w") as f:
        f.write("""<?xml version="1.0" encoding="UTF-8"?>
<description xmlns="http://openoffice.org/extensions/description/2006" xmlns:d="http://openoffice.org/extensions/description/2006">
  <identifier value="org.ellipsa.calc"/>
  <version value="%s"/>
  <platform value="linux_x86_64"/>
  <display-name><name lang="en">ellipsa sheet functions</name></display-name>
</description>
""" % version)
    oxt = os.path.join(out, "ellipsa-calc.oxt")
    with zipfile.ZipFile(oxt, "w", zipfile.ZIP_DEFLATED) as z:
        for root, _, files in os.walk(stage):
            for name in sorted(files):
                full = os.path.join(root, name)
                z.write(full, os.path.relpath(full, stage))
    print("wrote %s (%d functions)" % (oxt, len(records)))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
