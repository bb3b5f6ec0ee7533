#!/usr/bin/env bash
# Opens every workbook trialyst writes in a real spreadsheet application.
#
# Collects the results, plan, problems and roll-up workbooks that the test
# suite writes (the integration tests copy each one into the folder named by
# TRIALYST_KEEP_OUTPUTS), adds the demo (`trialyst run` on sample-workbooks)
# and two plans, converts each workbook to PDF with LibreOffice headless, and
# fails on any conversion error, missing or empty PDF, or a message about a
# damaged file or a repair. Each workbook is printed twice, on A4 and on Letter
# (tests/render/set_paper.py sets the paper), and each PDF is checked against
# the workbook's print setup by tests/render/pdf_print_check.py: the paper, the
# page count the setup promises (one page across, a page per manual break), no
# type below 8 pt, and every chart's title and axis titles on one page. The first
# pages of each PDF are rendered to PNG for a person to look at.
#
# Usage:
#   tests/render/check-in-office.sh [--outputs DIR] [--out DIR] [--install]
#
#   --outputs DIR  use the workbooks already collected in DIR (for example by
#                  `TRIALYST_KEEP_OUTPUTS=DIR cargo test --workspace`) instead
#                  of running the integration tests again
#   --out DIR      where the PDFs, PNGs and the log go (default: a new
#                  temporary folder, printed at the end)
#   --install      install LibreOffice Calc and poppler-utils with apt-get
#                  when they are missing (the default when run by hand; CI
#                  calls this script only when soffice is already there)
#
# Environment: TRIALYST_OFFICE_TIMEOUT (seconds per workbook, default 120),
# TRIALYST_OFFICE_PAGES (pages rendered per workbook, default 2).
set -euo pipefail
cd "$(dirname "$0")/../.."

outputs=""
out=""
install=1
while [ $# -gt 0 ]; do
    case "$1" in
        --outputs) outputs="$2"; shift 2 ;;
        --out) out="$2"; shift 2 ;;
        --install) install=1; shift ;;
        --no-install) install=0; shift ;;
        -h|--help) sed -n '2,26p' "$0"; exit 0 ;;
        *) echo "check-in-office: unknown argument '$1'" >&2; exit 2 ;;
    esac
done
timeout_seconds="${TRIALYST_OFFICE_TIMEOUT:-120}"
pages="${TRIALYST_OFFICE_PAGES:-2}"

# 1. The spreadsheet application and the PDF renderer.
missing=()
command -v soffice >/dev/null 2>&1 || missing+=(libreoffice-calc)
command -v pdftoppm >/dev/null 2>&1 || missing+=(poppler-utils)
# The page checks' scripts need openpyxl (Debian's python3-openpyxl): use the system
# Python when it has it, else whichever python3 comes first on the PATH.
python=python3
if [ -x /usr/bin/python3 ] && /usr/bin/python3 -c 'import openpyxl' 2>/dev/null; then
    python=/usr/bin/python3
fi
command -v python3 >/dev/null 2>&1 || missing+=(python3)
"$python" -c 'import openpyxl' 2>/dev/null || missing+=(python3-openpyxl)
if [ ${#missing[@]} -gt 0 ]; then
    if [ "$install" -eq 0 ]; then
        echo "check-in-office: missing ${missing[*]} (run without --no-install to install them)" >&2
        exit 1
    fi
    echo "check-in-office: installing ${missing[*]} with apt-get (Debian packages)"
    sudo_cmd=""
    if [ "$(id -u)" -ne 0 ]; then sudo_cmd="sudo"; fi
    $sudo_cmd apt-get update -qq
    DEBIAN_FRONTEND=noninteractive $sudo_cmd apt-get install -y -qq --no-install-recommends "${missing[@]}"
    if [ -x /usr/bin/python3 ] && /usr/bin/python3 -c 'import openpyxl' 2>/dev/null; then
        python=/usr/bin/python3
    fi
fi
echo "check-in-office: $(soffice --version 2>/dev/null | head -n 1)"

if [ -z "$out" ]; then
    out="$(mktemp -d -t trialyst-office-XXXXXX)"
fi
mkdir -p "$out"
out="$(cd "$out" && pwd)"
books="$out/workbooks"
pdfs="$out/pdf"
pngs="$out/png"
rm -rf "$books" "$pdfs" "$pngs"
mkdir -p "$books" "$pdfs" "$pngs"
log="$out/office.log"
: >"$log"

# 2. The workbooks: from the test suite, the demo and two plans.
if [ -n "$outputs" ]; then
    cp "$outputs"/*.xlsx "$books"/ 2>/dev/null || true
else
    echo "check-in-office: running the integration tests with TRIALYST_KEEP_OUTPUTS"
    TRIALYST_KEEP_OUTPUTS="$books" cargo test -q -p tests >>"$log" 2>&1 || {
        echo "check-in-office: the integration tests failed; see $log" >&2
        exit 1
    }
fi
cargo build -q -p sidecar --bin trialyst
target_dir="${CARGO_TARGET_DIR:-target}"
trialyst="$target_dir/debug/trialyst"
demo="$(mktemp -d -t trialyst-demo-XXXXXX)"
trap 'rm -rf "$demo"' EXIT
cp sample-workbooks/*.xlsx "$demo"/
"$trialyst" run "$demo" >>"$log" 2>&1 || true
for made in "$demo"/*.results.xlsx "$demo"/*.problems.xlsx; do
    [ -f "$made" ] && cp "$made" "$books/demo-$(basename "$made")"
done
"$trialyst" plan --factor "Temperature=160,180" --factor "Supplier=North,South,East" \
    --response "Yield (%)" --replicates 2 --seed 20260309 --out "$books/plan-two-factors.xlsx" >>"$log" 2>&1
"$trialyst" plan --factor "Temperature=160,180" --factor "Pressure=2,3" --factor "Time=10,14" \
    --factor "Speed=40,60" --factor "Gap=1,2" --response "Thickness" --centre-points 2 --blocks 2 \
    --runs 16 --seed 7 --out "$books/plan-fraction.xlsx" >>"$log" 2>&1

shopt -s nullglob
workbooks=("$books"/*.xlsx)
if [ ${#workbooks[@]} -eq 0 ]; then
    echo "check-in-office: no workbooks were collected" >&2
    exit 1
fi

# 3. The print checks must fail on a workbook that prints badly (a chart cut by a
# page break the setup did not plan), or they prove nothing.
profile_check="$(mktemp -d -t trialyst-office-selfcheck-XXXXXX)"
"$python" tests/render/make_cut_chart.py "$profile_check/cut-chart.xlsx"
"$python" tests/render/set_paper.py "$profile_check/cut-chart.xlsx" "$profile_check/cut-chart-A4.xlsx" A4
timeout "$timeout_seconds" soffice --headless --norestore --nolockcheck \
    "-env:UserInstallation=file://$profile_check/profile" \
    --convert-to pdf --outdir "$profile_check" "$profile_check/cut-chart-A4.xlsx" >>"$log" 2>&1
if "$python" tests/render/pdf_print_check.py "$profile_check/cut-chart-A4.xlsx" "$profile_check/cut-chart-A4.pdf" A4 \
    >"$out/self-check.txt" 2>&1 || ! grep -q "cut by a page break" "$out/self-check.txt"; then
    echo "check-in-office: the print checks did not find the cut chart of the badly laid-out workbook; see $out/self-check.txt" >&2
    rm -rf "$profile_check"
    exit 1
fi
rm -rf "$profile_check"
echo "check-in-office: the print checks find a chart cut by a page break (self-check)"

# 4. Convert each workbook on its own, with its own time limit, in a private profile.
profile="$(mktemp -d -t trialyst-office-profile-XXXXXX)"
trap 'rm -rf "$demo" "$profile"' EXIT
# Words that mean the application had trouble; its one normal line,
# "convert X -> Y using filter : calc_pdf_Export", and its notice that the
# optional Java runtime is absent are left out before matching.
alarm="error|corrupt|repair|could not be loaded|general input/output|warning"
failures=0
converted=0
papers="$out/papers"
rm -rf "$papers"
mkdir -p "$papers"
for original in "${workbooks[@]}"; do
  for paper in A4 Letter; do
    base="$(basename "$original" .xlsx)"
    name="$base-$paper"
    book="$papers/$name.xlsx"
    "$python" tests/render/set_paper.py "$original" "$book" "$paper"
    message_file="$out/$name.convert.txt"
    status=0
    timeout "$timeout_seconds" soffice --headless --norestore --nolockcheck \
        "-env:UserInstallation=file://$profile" \
        --convert-to pdf --outdir "$pdfs" "$book" >"$message_file" 2>&1 || status=$?
    cat "$message_file" >>"$log"
    pdf="$pdfs/$name.pdf"
    problem=""
    if [ "$status" -eq 124 ]; then
        problem="timed out after ${timeout_seconds}s"
    elif [ "$status" -ne 0 ]; then
        problem="soffice exited with $status"
    elif grep -vE "^convert |javaldx" "$message_file" | grep -qiE "$alarm"; then
        problem="$(grep -vE "^convert |javaldx" "$message_file" | grep -iE "$alarm" | head -n 1)"
    elif [ ! -s "$pdf" ]; then
        problem="no PDF was written"
    elif ! pdfinfo "$pdf" >/dev/null 2>&1; then
        problem="the PDF cannot be read back"
    fi
    if [ -n "$problem" ]; then
        echo "FAILED  $name.xlsx: $problem"
        failures=$((failures + 1))
        continue
    fi
    rm -f "$message_file"
    page_count="$(pdfinfo "$pdf" | awk '/^Pages:/ {print $2}')"
    pdftoppm -f 1 -l "$pages" -r 70 -png "$pdf" "$pngs/$name"
    # The printed pages against the print setup: paper, page count, type size, charts whole.
    if ! "$python" tests/render/pdf_print_check.py "$book" "$pdf" "$paper" >"$out/$name.print.txt" 2>&1; then
        echo "FAILED  $base.xlsx on $paper: $(head -n 1 "$out/$name.print.txt")"
        cat "$out/$name.print.txt" >>"$log"
        failures=$((failures + 1))
        continue
    fi
    rm -f "$out/$name.print.txt"
    converted=$((converted + 1))
    echo "ok      $base.xlsx on $paper ($page_count pages)"
  done
done

echo "check-in-office: $converted of $((2 * ${#workbooks[@]})) printings (A4 and Letter) passed; PDFs in $pdfs, first pages as PNG in $pngs"
if [ "$failures" -gt 0 ]; then
    echo "check-in-office: $failures workbook(s) failed; messages in $out/*.convert.txt and $log" >&2
    exit 1
fi
