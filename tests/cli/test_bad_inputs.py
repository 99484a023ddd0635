"""A catalogue of malformed point files and meshes, each run through the command-line tool.

Every case must end with exit code 2 and exactly one printable line on stderr,
`cylzone: error: FILE[:LINE]: problem`, naming the file (and the line, where the case has one),
at most 1000 bytes; no signal, no hang (each run has a timeout), nothing on stdout, no report
file created, and the input left byte for byte as it was. Inputs that declare huge counts are
run once more under an address-space limit (prlimit --as), where a refusal must come before any
allocation: a bare out-of-memory message is a failure.

The byte layouts follow the published format descriptions: PLY (G. Turk, "The PLY polygon file
format", 1994), OBJ (Wavefront "Object Files (.obj)", Advanced Visualizer manual, appendix B1),
OFF (Geomview manual, "OFF files"), STL (3D Systems, "StereoLithography Interface Specification",
1989), CSV (RFC 4180). Each case carries a one-line reason.

Usage: /usr/bin/python3 test_bad_inputs.py PATH_TO_CYLZONE
"""
import hashlib
import os
import shutil
import struct
import subprocess
import sys
import tempfile

CLI = sys.argv[1]
TIMEOUT = 30  # seconds; every case is refused in milliseconds when the reader works
MEMORY_LIMIT = 1 << 30  # bytes of address space for the prlimit runs
# AddressSanitizer reserves terabytes of address space for its shadow memory at start-up, so an
# address-space limit stops a sanitized build before main(): the sanitizer build (CMake option
# CYLZONE_SANITIZE, which sets this variable) runs every case without the limit only.
LIMITED_RUNS = os.environ.get("CYLZONE_SANITIZED_BUILD", "") != "1"
failures = []


def ply_header(encoding, elements, version="1.0"):
    """elements: list of (name, count, [property lines])."""
    lines = ["ply", f"format {encoding} {version}"]
    for name, count, props in elements:
        lines.append(f"element {name} {count}")
        lines.extend(props)
    lines.append("end_header")
    return ("\n".join(lines) + "\n").encode()


XYZ_FLOAT = ["property float x", "property float y", "property float z"]
XYZ_DOUBLE = ["property double x", "property double y", "property double z"]
FACE_LIST = ["property list uchar int vertex_indices"]


def le_doubles(*values):
    return struct.pack("<" + "d" * len(values), *values)


def binary_off(counts, vertices=b"", rest=b"", keyword=b"OFF BINARY\n"):
    return keyword + struct.pack("=3i", *counts) + vertices + rest


def binary_stl(declared, facets):
    return b"h" * 80 + struct.pack("<I", declared) + b"\0" * (50 * facets)


GOOD_ROWS = "0,0,0\n1,0,0\n0,1,0\n1,1,0.001\n"
PLY3 = ply_header("ascii", [("vertex", 3, XYZ_FLOAT)]) + b"0 0 0\n1 0 0\n0 1 0\n"

# (file name, bytes, line or None, text the message must hold, reason, huge)
# `line` is the line the message must name; `huge` marks inputs that declare huge counts.
CASES = [
    # ---- delimited text
    ("empty.csv", b"", None, "empty", "an empty file holds no points", False),
    ("comments.csv", b"# a\n# b\n\n", None, "no points", "only comments and blank lines", False),
    ("header-only.csv", b"x,y,z\n", None, "no points", "a header and no data", False),
    ("no-z.csv", b"x,y\n1,2\n", 1, "no column 'z'", "a header without z", False),
    ("twice-x.csv", b"x,y,z,x\n1,2,3,4\n", 1, "both give x", "two columns claim x", False),
    ("quoted-then-tabs.csv", b'"1"\n2\t3\t4\n', 1, "", "a quoted one-field header over tab rows "
     "(once read past the end of the header)", False),
    ("nan.csv", b"0,0,0\n1,nan,0\n", 2, "NaN", "NaN coordinate", False),
    ("inf.csv", b"0,0,0\n1,0,-inf\n", 2, "NaN or infinite", "infinite coordinate", False),
    ("overflow.csv", b"0,0,0\n1e999,0,0\n", 2, "out of the range", "beyond a double", False),
    ("word.csv", b"0,0,0\n1,abc,0\n", 2, "abc", "a word where a number belongs", False),
    ("four-fields.csv", b"1,2,3,4\n", 1, "4 fields", "no header and 4 fields", False),
    ("ragged.csv", b"0,0,0\n1,0,0\n0,1\n", 3, "", "a short row after good ones", False),
    ("nul.csv", b"0,0,0\n\0\0\0\0\n", None, "binary", "NUL bytes in text", False),
    ("utf16.csv", "x,y,z\n1,2,3\n".encode("utf-16"), None, "", "UTF-16 text", False),
    ("separators.csv", b",,\n", 1, "empty", "a line of separators only", False),
    ("decimal-comma.csv", b"x;y;z\n1,5;2,5;3,5\n", 2, "decimal commas", "decimal commas", False),
    ("empty-field.csv", b"1,,3\n", 1, "field 2", "an empty field", False),
    ("trailing-separator.csv", b"1,2,3\n4,5,\n", 2, "field 3", "a trailing separator", False),
    ("long-line.csv", b"1" * (1 << 20) + b",2,3\n", 1, "", "a 1 MB number", False),
    ("escape-header.csv", b"\x1b[31mx,y,z\n1,2,3\n", None, "", "a terminal escape in the header",
     False),
    ("long-header.csv", b"x,y," + b"q" * 5000 + b"\n1,2,3\n", 1, "", "a 5000-byte column name",
     False),
    ("zero-vector.csv", b"x,y,z,i,j,k\n1,2,3,0,0,0\n", 2, "", "a zero-length vector", False),
    ("nan-vector.csv", b"x,y,z,i,j,k\n1,2,3,0,nan,1\n", 2, "NaN", "a NaN vector component",
     False),
    ("partial-vector.csv", b"x,y,z,nx,nz\n1,2,3,0,1\n", 1, "ny", "nx and nz without ny", False),
    ("mixed-count.csv", b"1,2,3,0,0,1\n4,5,6\n", 2, "", "6 fields, then 3", False),
    ("cr-garbage.csv", b"0,0,0\r\n1,0,0\r\n0,1,0\r\nz\r\n", 4, "", "a stray word at the end",
     False),
    # ---- PLY
    ("nan-count.ply", ply_header("binary_little_endian", [("vertex", 1, XYZ_DOUBLE),
                                                           ("face", 1, ["property list float int vertex_indices"])])
     + le_doubles(1, 2, 3) + struct.pack("<f", float("nan")) + b"\0" * 12, 8,
     "not an integer type", "a list count of type float holding NaN", False),
    ("huge-empty-element-ascii.ply", ply_header("ascii", [("junk", 2**64 - 1, []), ("vertex", 3, XYZ_FLOAT)])
     + b"0 0 0\n1 0 0\n0 1 0\n", 3, "no properties",
     "an element without properties and count 2^64-1 before the vertices", True),
    ("huge-empty-element-binary.ply", ply_header("binary_little_endian", [("junk", 2**64 - 1, []),
                                                                          ("vertex", 1, XYZ_DOUBLE)])
     + le_doubles(1, 2, 3), 3, "no properties", "the same, binary", True),
    ("version-x.ply", ply_header("ascii", [("vertex", 1, XYZ_FLOAT)], version="x") + b"1 2 3\n", 2,
     "version", "a format version that is not a number", False),
    ("version-2.ply", ply_header("ascii", [("vertex", 1, XYZ_FLOAT)], version="2.0") + b"1 2 3\n",
     2, "version", "a version the format does not define", False),
    ("no-end-header.ply", b"ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\n", 4,
     "end_header", "a header that never ends", False),
    ("unknown-keyword.ply", b"ply\nformat ascii 1.0\nelemnt vertex 1\nend_header\n", 3,
     "unknown PLY header keyword", "a misspelt keyword", False),
    ("unknown-type.ply", b"ply\nformat ascii 1.0\nelement vertex 1\nproperty float128 x\nend_header\n",
     4, "float128", "an unknown scalar type", False),
    ("huge-vertices.ply", ply_header("binary_little_endian", [("vertex", 2**64 - 1, XYZ_DOUBLE)])
     + le_doubles(1, 2, 3), 3, "declares", "2^64-1 vertices in 24 bytes", True),
    ("huge-faces.ply", ply_header("binary_little_endian", [("vertex", 1, XYZ_DOUBLE),
                                                           ("face", 2_000_000_000, FACE_LIST)])
     + le_doubles(1, 2, 3), 7, "declares", "2e9 faces in no bytes", True),
    ("huge-faces-ascii.ply", ply_header("ascii", [("vertex", 1, XYZ_FLOAT), ("face", 2_000_000_000, FACE_LIST)])
     + b"1 2 3\n", 7, "declares", "the same, ASCII", True),
    ("cut-binary.ply", ply_header("binary_little_endian", [("vertex", 3, XYZ_DOUBLE)])
     + le_doubles(1, 2, 3, 4), None, "truncated", "data ends inside vertex 2", False),
    ("cut-faces.ply", ply_header("binary_little_endian", [("vertex", 3, XYZ_DOUBLE), ("face", 1, FACE_LIST)])
     + le_doubles(0, 0, 0, 1, 0, 0, 0, 1, 0) + b"\x03\0\0\0\0", None, "face 1 of 1",
     "data ends inside the face list", False),
    ("cut-ascii.ply", ply_header("ascii", [("vertex", 3, XYZ_FLOAT)]) + b"0 0 0\n1 0\n", None,
     "truncated", "ASCII data ends in vertex 2", False),
    ("nan-ascii.ply", ply_header("ascii", [("vertex", 2, XYZ_FLOAT)]) + b"0 0 0\n1 nan 0\n", 9,
     "NaN", "NaN in ASCII", False),
    ("inf-binary.ply", ply_header("binary_little_endian", [("vertex", 2, XYZ_DOUBLE)])
     + le_doubles(0, 0, 0, 1, float("inf"), 0), None, "vertex 2", "infinity in binary", False),
    ("float-overflow.ply", ply_header("ascii", [("vertex", 2, XYZ_FLOAT)]) + b"0 0 0\n1e308 0 0\n",
     9, "vertex 2", "1e308 in a float property (names vertex 2)", False),
    ("missing-ny.ply", ply_header("ascii", [("vertex", 1, XYZ_FLOAT + ["property float nx", "property float nz"])])
     + b"1 2 3 0 1\n", 3, "ny", "nx and nz without ny", False),
    ("zero-normal.ply", ply_header("ascii", [("vertex", 1, XYZ_FLOAT + ["property float nx", "property float ny",
                                                                        "property float nz"])])
     + b"1 2 3 0 0 0\n", 11, "zero-length normal", "a normal 0 0 0", False),
    ("nan-normal.ply", ply_header("binary_little_endian",
                                  [("vertex", 1, XYZ_DOUBLE + ["property double nx", "property double ny",
                                                               "property double nz"])])
     + le_doubles(1, 2, 3, 0, float("nan"), 1), None, "NaN or infinite normal",
     "a NaN normal component that is not the first", False),
    ("integer-x.ply", ply_header("binary_little_endian", [("vertex", 1, ["property uchar x", "property float y",
                                                                       "property float z"])])
     + b"\x01" + struct.pack("<ff", 2, 3), 3, "integer type",
     "an integer-typed coordinate (OpenMesh printed to the terminal)", False),
    ("no-vertex.ply", ply_header("ascii", [("point", 1, ["property float x"])]) + b"1\n", None,
     "no 'vertex' element", "no vertex element", False),
    ("no-z.ply", ply_header("ascii", [("vertex", 1, XYZ_FLOAT[:2])]) + b"1 2\n", None,
     "no property 'z'", "no z property", False),
    ("negative-count.ply", b"ply\nformat ascii 1.0\nelement vertex -3\nproperty float x\nend_header\n",
     3, "count", "a negative element count", False),
    ("float-count.ply", b"ply\nformat ascii 1.0\nelement vertex 1e3\nproperty float x\nend_header\n",
     3, "count", "an element count in exponent notation", False),
    ("two-formats.ply", b"ply\nformat ascii 1.0\nformat ascii 1.0\nend_header\n", 3, "second",
     "two format lines", False),
    ("negative-list.ply", ply_header("binary_little_endian", [("vertex", 1, XYZ_DOUBLE),
                                                              ("face", 1, ["property list char int vertex_indices"])])
     + le_doubles(1, 2, 3) + b"\xff", None, "negative list length", "a list length of -1", False),
    ("property-first.ply", b"ply\nformat ascii 1.0\nproperty float x\nend_header\n", 3,
     "before any 'element'", "a property outside any element", False),
    ("header-binary.ply", b"ply\nformat ascii 1.0\nelement vertex 1\x00\x01\nend_header\n", 3,
     "binary data", "control bytes in the header", False),
    ("zero-vertices.ply", ply_header("ascii", [("vertex", 0, XYZ_FLOAT)]), None, "0 vertices",
     "no vertices declared", False),
    ("noise.ply", bytes((i * 37 + 11) % 256 for i in range(3000)), 1, "not a PLY file",
     "random bytes", False),
    # ---- OBJ
    ("corner-without-vertex.obj", b"v 0 8 1\nf /5\n", 2, "needs at least 3",
     "a face corner without a vertex index (once an abort inside OpenMesh)", False),
    ("corner-without-vertex-3.obj", b"v 0 8 1\nf /5 1 1\n", 2, "names no vertex",
     "the same corner in a face of three", False),
    ("index-out-of-range.obj", b"v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 99\n", 4, "99",
     "a face naming vertex 99 of 3", False),
    ("index-zero.obj", b"v 0 0 0\nv 1 0 0\nv 0 1 0\nf 0 1 2\n", 4, "names no vertex",
     "index 0 (OBJ counts from 1)", False),
    ("forward-reference.obj", b"v 0 0 0\nf 1 2 3\nv 1 0 0\nv 0 1 0\n", 2, "defined before it",
     "a face naming vertices defined after it", False),
    ("two-corners.obj", b"v 0 0 0\nv 1 0 0\nf 1 2\n", 3, "needs at least 3", "a face of two corners",
     False),
    ("four-parts.obj", b"v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1/1/1/1 2 3\n", 4, "more than three parts",
     "a corner with four parts", False),
    ("normal-out-of-range.obj", b"v 0 0 0\nv 1 0 0\nv 0 1 0\nvn 0 0 1\nf 1//7 2//1 3//1\n", 5,
     "names no normal", "a corner naming normal 7 of 1", False),
    ("texture-out-of-range.obj", b"v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1/4 2/1 3/1\n", 4,
     "texture vertex", "a corner naming a texture vertex that does not exist", False),
    ("float-overflow.obj", b"v 0 0 0\nv " + b"3" * 120 + b" 0 0\nv 0 1 0\nvn 0 0 1\nf 1//1 2//1 3//1\n", 2,
     "beyond the range of a float", "a coordinate OpenMesh cannot hold (once a heap overflow)", False),
    ("short-vertex.obj", b"v 1 2 3\nv 4 5\n", 2, "needs x y z", "a vertex of two values", False),
    ("nan-vertex.obj", b"v 1 2 3\nv nan 5 6\n", 2, "NaN", "a NaN vertex", False),
    ("nan-normal.obj", b"v 1 2 3\nvn 0 nan 1\n", 2, "NaN", "a NaN normal", False),
    ("no-vertices.obj", b"# nothing\nvn 0 0 1\n", None, "no 'v' lines", "normals only", False),
    ("noise.obj", bytes((i * 91 + 3) % 256 for i in range(2000)), None, "binary",
     "random bytes", False),
    ("mtllib-only.obj", b"mtllib /etc/passwd\n", None, "no 'v' lines",
     "a material library and no vertices", False),
    # ---- OFF
    ("huge-faces.off", b"OFF\n3 2000000000 0\n0 0 0\n1 0 0\n0 1 0\n", 2, "declares",
     "2e9 faces in a few bytes (ran for 30 s and gigabytes)", True),
    ("huge-faces-binary.off", binary_off((3, 2_000_000_000, 0), struct.pack("=9f", 0, 0, 0, 1, 0, 0, 0, 1, 0)),
     None, "declares", "the same, binary (exited 0 after 28 s)", True),
    ("huge-vertices.off", b"OFF\n4000000000 0 0\n0 0 0\n", 2, "declares", "4e9 vertices", True),
    ("negative-vertices.off", binary_off((-5, 0, 0)), None, "negative",
     "a negative binary vertex count", False),
    ("cut.off", b"OFF\n3 0 0\n1 2 3\n4 5 6\n", 4, "truncated", "2 of 3 vertices", False),
    ("short-vertex.off", b"OFF\n3 0 0\n1 2 3\n4 5\n7 8 9\n", 4, "needs x y z",
     "a vertex of two values", False),
    ("face-out-of-range.off", b"OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 7\n", 6, "vertex index",
     "a face naming vertex 7 of 3", False),
    ("face-too-short.off", b"OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n4 0 1 2\n", 6, "corners",
     "a face declaring 4 corners and listing 3", False),
    ("bad-counts.off", b"OFF\n3 x 0\n0 0 0\n1 0 0\n0 1 0\n", 2, "counts", "a face count 'x'",
     False),
    ("nan.off", b"OFF\n2 0 0\n1 2 3\nnan 5 6\n", 4, "NaN", "a NaN vertex", False),
    ("4off.off", b"4OFF\n1 0 0\n1 2 3 1\n", 1, "not supported", "homogeneous vertices", False),
    ("not-off.off", b"PLY\n3 0 0\n", 1, "not an OFF file", "another keyword", False),
    ("cut-binary-counts.off", b"OFF BINARY\n\x01\x00", None, "truncated",
     "binary counts cut short", False),
    ("huge-corners-binary.off", binary_off((3, 1, 0), struct.pack("=9f", 0, 0, 0, 1, 0, 0, 0, 1, 0),
                                           struct.pack("=ii", 2**31 - 1, 0)), None, "face 1",
     "a binary face declaring 2^31-1 corners", False),
    ("empty.off", b"", None, "empty", "an empty file", False),
    # ---- STL
    ("facet-count.stl", binary_stl(8, 7), None, "declares 8 facets", "8 facets declared, 7 present",
     False),
    ("huge-facets.stl", binary_stl(0xFFFFFFFF, 1), None, "declares 4294967295 facets",
     "2^32-1 facets declared in a 134-byte file", True),
    ("no-endsolid.stl", b"solid s\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\n", None, "endsolid",
     "ASCII cut before endsolid", False),
    ("nan.stl", b"solid s\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\nvertex 1 0 nan\nvertex 0 1 0\n"
     b"endloop\nendfacet\nendsolid s\n", 5, "NaN", "a NaN corner", False),
    ("missing-value.stl", b"solid s\nfacet normal 0 0 1\nouter loop\nvertex 0 0\nendloop\nendfacet\n"
     b"endsolid s\n", 5, "", "a corner of two values", False),
    ("zero-facets.stl", binary_stl(0, 0), None, "0 facets", "a binary STL of no facets", False),
    ("tiny.stl", b"abc", None, "not an STL file", "three bytes", False),
    ("empty.stl", b"", None, "empty", "an empty file", False),
]

# Cases also run through `cylzone check` with a plan whose datum A reads the bad file.
CHECK_EVERY = 3


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def run(args, limit=None):
    command = [CLI, *args]
    if limit:
        command = ["prlimit", f"--as={limit}", *command]
    try:
        p = subprocess.run(command, capture_output=True, timeout=TIMEOUT)
    except subprocess.TimeoutExpired:
        return None, b"", b""
    return p.returncode, p.stdout, p.stderr


def judge(label, outcome, bad_path, line, fragment, outputs=()):
    code, out, err = outcome
    problems = []
    if code is None:
        problems.append(f"no answer within {TIMEOUT} s")
    elif code < 0:
        problems.append(f"killed by signal {-code}")
    elif code != 2:
        problems.append(f"exit code {code}, expected 2")
    if out.strip():
        problems.append(f"stdout not empty: {out[:80]!r}")
    text = err.decode("utf-8", "replace")
    lines = [l for l in text.split("\n") if l.strip()]
    if len(lines) != 1:
        problems.append(f"expected one line on stderr, got {len(lines)}: {text[:300]!r}")
    message = lines[0] if lines else ""
    if not message.startswith("cylzone: error: "):
        problems.append(f"stderr does not start with 'cylzone: error: ': {message[:200]!r}")
    if len(err.rstrip(b"\n")) > 1000 + len("cylzone: error: "):
        problems.append(f"message of {len(err)} bytes")
    if any(b < 0x20 or b == 0x7f for b in err.rstrip(b"\n")):
        problems.append(f"control bytes in the message: {err[:200]!r}")
    name = os.path.basename(bad_path)
    if name not in message:
        problems.append(f"message does not name {name}: {message[:200]!r}")
    if line is not None and f"{name}:{line}:" not in message:
        problems.append(f"message does not name line {line}: {message[:200]!r}")
    if fragment and fragment not in message:
        problems.append(f"message lacks {fragment!r}: {message[:300]!r}")
    if "bad_alloc" in message:
        problems.append("bare out-of-memory message")
    for o in outputs:
        if os.path.exists(o):
            problems.append(f"output file {os.path.basename(o)} was created")
    if problems:
        failures.append(f"{label}: " + "; ".join(problems))


def check_plan_text(bad_name, bore_points):
    return f"""format = "cylzone-plan-1"
name = "bad-input catalogue"
units = "mm"

[probe]
points = "surface"

[datum.A]
feature = "plane"
points = "{bad_name}"
material_side = [0.0, 0.0, -1.0]

[[bore]]
id = "H1"
points = "{bore_points}"
basic = [0.0, 0.0]
size = {{ lower = 9.9, upper = 10.1 }}
perpendicularity = {{ tolerance = 0.05 }}
"""


names = [c[0] for c in CASES]
if len(set(names)) != len(names):
    print("duplicate case names")
    sys.exit(1)
if len(CASES) < 80:
    print(f"the catalogue holds {len(CASES)} cases; at least 80 expected")
    sys.exit(1)

with tempfile.TemporaryDirectory() as tmp:
    bore = os.path.join(tmp, "bore.csv")
    with open(bore, "w") as f:
        f.write(GOOD_ROWS)
    for index, (name, data, line, fragment, reason, huge) in enumerate(CASES):
        path = os.path.join(tmp, name)
        with open(path, "wb") as f:
            f.write(data)
        before = digest(path)
        label = f"{name} ({reason})"
        judge(label + " [fit]", run(["fit", "plane", path]), path, line, fragment)
        if huge and LIMITED_RUNS:
            judge(label + " [fit, memory limit]", run(["fit", "plane", path], MEMORY_LIMIT), path,
                  line, fragment)
        if index % CHECK_EVERY == 0:
            plan = os.path.join(tmp, f"plan-{index}.toml")
            with open(plan, "w") as f:
                f.write(check_plan_text(name, "bore.csv"))
            outputs = [os.path.join(tmp, f"out-{index}.json"), os.path.join(tmp, f"out-{index}.csv")]
            judge(label + " [check]", run(["check", plan, "--json", outputs[0], "--csv", outputs[1]]),
                  path, line, fragment, outputs)
        if digest(path) != before:
            failures.append(f"{label}: the input file changed")

# ---- Plausibility between a plan and its data (docs/evaluation.md, "Plausibility checks"): the
# demo part copied and spoiled one way at a time; each is refused at the plan's line and key.
DEMO = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "point-clouds",
                    "valve-manifold")
INCH_KEYS = ("tip_diameter", "basic", "size", "depth", "position", "perpendicularity",
             "cylindricity")


def in_inches(text):
    """The demo plan with every length written in inches (mm / 25.4, exact by definition)."""
    import re
    lines = text.split("\n")
    for i, l in enumerate(lines):
        if l.split(" ")[0] in INCH_KEYS:
            lines[i] = re.sub(r"(?<![\w.])-?\d+\.?\d*(?![\w.])",
                              lambda m: f"{float(m.group(0)) / 25.4:.7f}", l)
    return "\n".join(lines).replace('units = "mm"', 'units = "inch"')


def after(text, header, old, new):
    """`text` with the first `old` after `header` replaced by `new`."""
    at = text.index(old, text.index(header))
    return text[:at] + new + text[at + len(old):]


def reversed_vectors(path):
    rows = open(path, encoding="utf-8").read().split("\n")
    out = [rows[0]]
    for r in rows[1:]:
        f = r.split(",")
        out.append(",".join(f[:3] + [f"{-float(v):.7f}" for v in f[3:]]) if len(f) == 6 else r)
    open(path, "w", encoding="utf-8").write("\n".join(out))


# (label, plan edit, point-file edit or None, marker of the line named, key, fragment)
PLAUSIBILITY = [
    ("datum B declared a pin, its points and vectors a hole",
     lambda t: after(t, "[datum.B]", 'feature = "bore"', 'feature = "pin"'), None,
     'feature = "pin"', "datum.B.feature", "declared a pin"),
    ("P1's vectors reversed (a boss's)", lambda t: t, "P1.csv", 'points = "points/P1.csv"',
     "bore[P1].points", "as a pin's do"),
    ("units = inch on millimetre data", in_inches, None, "size = { lower = 0.7874016",
     "datum.B.size", "plan units are inch, the data look like mm"),
    ("a position tolerance of 20 meant as 0.020",
     lambda t: after(t, 'id = "P1"', "tolerance = 0.030", "tolerance = 20"), None,
     "tolerance = 20,", "bore[P1].position.tolerance", "was 0.02 meant?"),
    ("a depth ten times the probed length",
     lambda t: after(t, 'id = "P1"', "bottom = -60.0", "bottom = -600.0"), None,
     "bottom = -600.0", "bore[P1].depth", "where it was not measured"),
]

with tempfile.TemporaryDirectory() as tmp:
    for index, (reason, edit, points, marker, key, fragment) in enumerate(PLAUSIBILITY):
        part = os.path.join(tmp, f"part-{index}")
        shutil.copytree(DEMO, part)
        plan = os.path.join(part, "plan.toml")
        text = edit(open(plan, encoding="utf-8").read())
        open(plan, "w", encoding="utf-8").write(text)
        if points:
            reversed_vectors(os.path.join(part, "points", points))
        line = text[:text.index(marker)].count("\n") + 1
        before = digest(plan)
        outputs = [os.path.join(tmp, f"plausible-{index}.json"),
                   os.path.join(tmp, f"plausible-{index}.csv")]
        outcome = run(["check", plan, "--json", outputs[0], "--csv", outputs[1]])
        judge(f"plan.toml ({reason})", outcome, plan, line, fragment, outputs)
        if key not in outcome[2].decode("utf-8", "replace"):
            failures.append(f"plan.toml ({reason}): the message does not name key {key}")
        if digest(plan) != before:
            failures.append(f"plan.toml ({reason}): the plan changed")

if failures:
    print(f"{len(failures)} of the {len(CASES)} cases misbehave:")
    print("\n".join(failures))
    sys.exit(1)
print(f"all {len(CASES)} bad inputs and {len(PLAUSIBILITY)} implausible plans refused cleanly"
      + ("" if LIMITED_RUNS else " (address-space-limited runs skipped: sanitized build)"))
