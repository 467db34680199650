#!/usr/bin/env bash
# e2e_pictures_svg.sh: `dipolize plot`, `preview` and `report` end to end.
# Builds a small sweep directory (with the real `dipolize sweep` when it works, otherwise
# from hand-made tables marked as synthetic test input), draws the pictures, and checks
# that every SVG is well-formed XML (Python's xml.etree.ElementTree), that the report is
# balanced HTML (Python's html.parser) with no reference to anything on the network, that
# bad input gives exit code 2 with one "dipolize: " message and no output, and, where
# Debian's chromium is installed, that the report renders to a non-empty PNG.
set -u
BIN=${1:?usage: e2e_pictures_svg.sh PATH/TO/dipolize}
PY=/usr/bin/python3
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
ok() { echo "ok   $*"; }
bad() { echo "FAIL $*"; fails=$((fails + 1)); }

# ---- a voxel file: the real shape command if it works, else a hand-written CSV voxel list
if "$BIN" shape split-ring --outer-radius 30nm --inner-radius 18nm --thickness 10nm \
    --gap 8nm --spacing 3nm -o "$T/srr.vtk" >/dev/null 2>&1; then
    GEOM="$T/srr.vtk"
    GEOM_OPTS=()
    ok "voxel file from dipolize shape"
else
    GEOM="$T/l.csv"
    GEOM_OPTS=(--spacing 3nm)
    {
        echo "# synthetic test input: an L of label 1 with one voxel of label 2"
        echo "i,j,k,label"
        for i in 0 1 2 3 4 5; do echo "$i,0,0,1"; done
        for j in 1 2 3; do echo "0,$j,0,1"; done
        echo "5,3,1,2"
    } >"$GEOM"
    ok "dipolize shape unavailable: hand-written CSV voxel list"
fi

# ---- a sweep directory -------------------------------------------------------------------
RUN="$T/run"
if "$BIN" sweep --help >/dev/null 2>&1 &&
    "$BIN" sweep "$GEOM" "${GEOM_OPTS[@]}" --eps=-8+1.2i --host-index 1.45 \
        --wavelengths 500nm:700nm:50nm -o "$RUN" --quiet >"$T/sweep.log" 2>&1; then
    ok "sweep directory from dipolize sweep"
else
    echo "note: dipolize sweep not usable here; writing synthetic tables"
    rm -rf "$RUN"
    mkdir -p "$RUN"
    # Synthetic test input: invented Lorentz-like values in the sweep format
    # (docs/sweep-format.md), not a computation. One wavelength is marked not converged.
    $PY - "$RUN" "$GEOM" <<'EOF' || bad "writing synthetic tables"
import json, math, sys
out, geom = sys.argv[1], sys.argv[2]
lams = [500e-9 + 25e-9 * i for i in range(9)]
V = 4 / 3 * math.pi * (25e-9) ** 3
def lor(lam, lam0, amp, width):
    w, w0, g = 1 / lam, 1 / lam0, width / lam0 ** 2
    return amp * w0 ** 2 / complex(w0 ** 2 - w ** 2, -g * w)
with open(out + "/alpha.csv", "w") as f, open(out + "/cross_sections.csv", "w") as g, \
        open(out + "/diagnostics.csv", "w") as h:
    for t in (f, g, h):
        t.write("# SYNTHETIC TEST INPUT: invented values, not a computation\n")
    f.write("wavelength_m,block,row,col,re,im,converged\n")
    g.write("wavelength_m,ext,abs,sca,ext_dipole,abs_dipole,sca_dipole,rel_diff,converged\n")
    h.write("wavelength_m,iterations,residual,converged,reciprocity,energy_balance,"
            "min_absorption_eig,dipole_validity,min_fluct_eig_m3\n")
    for i, lam in enumerate(lams):
        c = 0 if i == 4 else 1
        k = 2 * math.pi * 1.45 / lam
        A = [[0j] * 6 for _ in range(6)]
        A[0][0] = lor(lam, 600e-9, 3 * V, 0.1e-6) + V
        A[1][1], A[2][2] = 0.7 * V + 0.1j * V, 0.4 * V + 0.05j * V
        A[3][3], A[4][4], A[5][5] = 0.02 * V, lor(lam, 650e-9, 0.5 * V, 0.1e-6), 0.01 * V
        A[0][4] = 0.2j * A[4][4]
        A[4][0] = -A[0][4]
        for b, (r0, c0) in zip(["ee", "em", "me", "mm"], [(0, 0), (0, 3), (3, 0), (3, 3)]):
            for r in range(3):
                for cc in range(3):
                    v = A[r0 + r][c0 + cc]
                    f.write(f"{lam:.17g},{b},{r},{cc},{v.real:.17g},{v.imag:.17g},{c}\n")
        ext = k * (A[0][0].imag + A[4][4].imag)
        sca = k ** 4 / (6 * math.pi) * (abs(A[0][0]) ** 2 + abs(A[4][4]) ** 2)
        g.write(f"{lam:.17g},{ext:.17g},{ext - sca:.17g},{sca:.17g},{ext * 1.02:.17g},"
                f"{ext * 1.02 - sca:.17g},{sca:.17g},0.02,{c}\n")
        val = 0.03 + 0.2 * math.exp(-((lam - 550e-9) / 40e-9) ** 2)
        h.write(f"{lam:.17g},{30 + i},{1e-9 if c else 1e-3},{c},1e-10,1e-3,1e-12,"
                f"{val:.17g},1e-30\n")
summary = {"program": "dipolize", "version": "synthetic test input",
           "input": {"path": geom, "sha256": "0" * 64},
           "materials": [{"label": 1, "spec": "-8+1.2i"}],
           "options": {"host_index": 1.45, "spacing": "3nm"},
           "wavelengths_m": lams, "shard": {"index": 0, "count": 1},
           "results": [{"wavelength_m": l, "converged": i != 4, "iterations": 30 + i,
                        "residual": 1e-9, "seconds": 0.1} for i, l in enumerate(lams)]}
json.dump(summary, open(out + "/summary.json", "w"))
z = [0.0, 0.0]
chi = [[[2.9 * V, 0.0], z, z], [z, [2.1 * V, 0.0], z], [z, z, [1.3 * V, 0.0]]]
json.dump({"chi": chi, "volume_m3": V, "a_eq_m": 25e-9, "voxels": 579,
           "spacing_m": 3e-9}, open(out + "/static.json", "w"))
c3 = [[[0.0, -2 / 9 if r == c else 0.0] for c in range(3)] for r in range(3)]
json.dump({"C0": chi, "C2": chi, "C3": c3, "C4": chi, "fit_residual": 1e-4,
           "points": [0.1, 0.2, 0.3], "radiative_check": 0.004},
          open(out + "/expand.json", "w"))
EOF
fi

# ---- plot ------------------------------------------------------------------------------------
if "$BIN" plot "$RUN" >"$T/plot.log" 2>&1; then ok "plot"; else bad "plot: $(cat "$T/plot.log")"; fi
for f in alpha_ee alpha_mm cross_sections dipole_validity; do
    [ -s "$RUN/plots/$f.svg" ] && ok "plots/$f.svg written" || bad "plots/$f.svg missing"
done
"$BIN" plot "$RUN" -o "$T/figs" >/dev/null 2>&1 && [ -s "$T/figs/alpha_ee.svg" ] &&
    ok "plot -o OUTDIR" || bad "plot -o OUTDIR"

# ---- preview ------------------------------------------------------------------------------
if "$BIN" preview "$GEOM" "${GEOM_OPTS[@]}" -o "$T/preview.svg" >"$T/pv.log" 2>&1; then
    ok "preview"
else
    bad "preview: $(cat "$T/pv.log")"
fi

# ---- report ---------------------------------------------------------------------------------
if "$BIN" report "$RUN" -o "$T/report.html" >"$T/rep.log" 2>&1; then
    ok "report"
else
    bad "report: $(cat "$T/rep.log")"
fi

# ---- validate: SVG as XML, HTML balanced and self-contained ----------------------------------
$PY - "$T" "$RUN/plots" <<'EOF' && ok "SVG and HTML validation" || bad "SVG or HTML validation"
import glob, re, sys, xml.etree.ElementTree as ET
from html.parser import HTMLParser
tmp, plots = sys.argv[1], sys.argv[2]
svgs = sorted(glob.glob(plots + "/*.svg")) + [tmp + "/preview.svg"]
ns = "{http://www.w3.org/2000/svg}"
errors = 0
for p in svgs:
    try:
        root = ET.parse(p).getroot()
    except Exception as e:  # ElementTree raises ParseError with line and column
        print(f"  {p}: not well-formed XML: {e}")
        errors += 1
        continue
    if root.tag != ns + "svg" or "viewBox" not in root.attrib:
        print(f"  {p}: root is not an svg element with a viewBox")
        errors += 1
    texts = "".join(root.itertext())
    if p.endswith("alpha_ee.svg") and "wavelength (nm)" not in texts:
        print(f"  {p}: no wavelength axis label")
        errors += 1
    if p.endswith("dipole_validity.svg") and "0.1" not in texts:
        print(f"  {p}: threshold not marked")
        errors += 1
    if p.endswith("preview.svg") and " nm" not in texts:
        print(f"  {p}: no scale in nm")
        errors += 1
    print(f"  {p}: {len(list(root.iter()))} elements")

VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta",
        "source", "track", "wbr"}
class Check(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.problems, self.tags, self.svg = [], [], {}, 0
    def handle_starttag(self, tag, attrs):
        self.tags[tag] = self.tags.get(tag, 0) + 1
        for k, v in attrs:
            if k in ("src", "href", "xlink:href") and v and not v.startswith("#"):
                self.problems.append(f"external {k}={v}")
        if tag not in VOID:
            self.stack.append(tag)
    def handle_startendtag(self, tag, attrs):
        self.tags[tag] = self.tags.get(tag, 0) + 1
    def handle_endtag(self, tag):
        if tag in VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.problems.append(f"</{tag}> closes <{self.stack[-1] if self.stack else ''}> "
                                 f"at line {self.getpos()[0]}")
        else:
            self.stack.pop()
html = open(tmp + "/report.html", encoding="utf-8").read()
c = Check()
c.feed(html)
c.close()
if c.stack:
    c.problems.append(f"unclosed: {c.stack}")
if re.search(r"https?://", html):
    c.problems.append("an http(s):// reference")
if re.search(r"<script|<link|<img|<iframe|@import|url\((?!#)", html):
    c.problems.append("a script, link, image, frame or non-local url()")
for section in ("glance", "inputs", "static", "spectra", "geometry", "diagnostics",
                "cautions"):
    if f'id="{section}"' not in html:
        c.problems.append(f"section {section} missing")
if c.tags.get("svg", 0) < 4:
    c.problems.append(f"only {c.tags.get('svg', 0)} inline svg pictures")
if "Principal values" not in html:
    c.problems.append("no principal values")
for p in c.problems:
    print("  report.html:", p)
print(f"  report.html: {len(html)} bytes, {c.tags.get('svg', 0)} inline svg")
sys.exit(1 if errors or c.problems else 0)
EOF

# ---- bad input: exit 2, one "dipolize: " line, no output ------------------------------------
expect_usage() { # name, then the command
    local name=$1
    shift
    "$@" >"$T/out.log" 2>"$T/err.log"
    local rc=$?
    local lines
    lines=$(wc -l <"$T/err.log")
    if [ "$rc" -eq 2 ] && [ "$lines" -eq 1 ] && grep -q '^dipolize: ' "$T/err.log"; then
        ok "$name: exit 2, $(cat "$T/err.log")"
    else
        bad "$name: exit $rc, stderr: $(cat "$T/err.log")"
    fi
}
expect_usage "plot of a missing directory" "$BIN" plot "$T/nowhere"
expect_usage "plot without a directory" "$BIN" plot
expect_usage "plot with an unknown option" "$BIN" plot "$RUN" --colour red
expect_usage "report of a missing directory" "$BIN" report "$T/nowhere"
expect_usage "preview of a missing file" "$BIN" preview "$T/nowhere.vtk"
DAM="$T/damaged"
mkdir -p "$DAM"
cp "$RUN"/*.csv "$DAM"/
# Damage the 're' field of the second data row of alpha.csv; remember its line number.
DLINE=$($PY - "$DAM/alpha.csv" <<'EOF'
import sys
p = sys.argv[1]
lines = open(p).read().split("\n")
head = next(i for i, l in enumerate(lines) if l.strip() and not l.startswith("#"))
col = [c.strip() for c in lines[head].split(",")].index("re")
n = head + 2  # 0-based index of the second data row
f = lines[n].split(",")
f[col] = "1.2.3"
lines[n] = ",".join(f)
open(p, "w").write("\n".join(lines))
print(n + 1)
EOF
)
expect_usage "plot of a damaged alpha.csv" "$BIN" plot "$DAM"
grep -q "alpha.csv:$DLINE: column 're'" "$T/err.log" && ok "message names alpha.csv:$DLINE" ||
    bad "message lacks alpha.csv:$DLINE: $(cat "$T/err.log")"
[ ! -e "$DAM/plots" ] && ok "no plots directory after the failure" ||
    bad "plots directory created despite the failure"
expect_usage "report of a damaged alpha.csv" "$BIN" report "$DAM"
[ ! -e "$DAM/report.html" ] && ok "no report after the failure" || bad "partial report left"
cp "$RUN"/*.csv "$DAM"/
printf '{"chi": [1, 2' >"$DAM/static.json"
expect_usage "report with a damaged static.json" "$BIN" report "$DAM"
grep -q 'static.json' "$T/err.log" && ok "message names static.json" ||
    bad "message lacks static.json"

# ---- a real browser, when installed ------------------------------------------------------------
if [ -x /usr/bin/chromium ]; then
    PROFILE=$(mktemp -d)
    timeout 120 /usr/bin/chromium --headless --no-sandbox --disable-gpu --disable-quic \
        --no-first-run --disable-background-networking --disable-component-update \
        --disable-sync --user-data-dir="$PROFILE" --screenshot="$T/report.png" \
        --window-size=1200,2000 "file://$T/report.html" >"$T/chromium.log" 2>&1
    rm -rf "$PROFILE"
    if $PY - "$T/report.png" <<'EOF'; then
import struct, sys
data = open(sys.argv[1], "rb").read()
# PNG signature and IHDR (PNG specification, W3C 2003, sections 5.2 and 11.2.2)
assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
w, h = struct.unpack(">II", data[16:24])
assert w >= 1000 and h >= 1000 and len(data) > 20000, f"{w}x{h}, {len(data)} bytes"
print(f"  report.png: {w}x{h}, {len(data)} bytes")
EOF
        ok "chromium renders the report"
    else
        bad "chromium rendering: $(tail -3 "$T/chromium.log")"
    fi
else
    echo "skip chromium rendering: /usr/bin/chromium is not installed"
fi

if [ "$fails" -ne 0 ]; then
    echo "$fails check(s) failed"
    exit 1
fi
echo "all picture checks passed"
