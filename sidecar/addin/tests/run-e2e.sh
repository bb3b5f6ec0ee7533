#!/usr/bin/env bash
# End-to-end test of the LibreOffice add-in, headless.
#
#   sidecar/addin/tests/run-e2e.sh [--program TRIALYST] [--picture PNG] [--bench RUNS]
#
# With --bench RUNS it runs the timing script bench_office.py instead of the
# checks: p50 of RUNS warm analyses of a 3 x 5 table and of 20 x 5,000 values.
#
# Builds the extension, installs it with unopkg into a throwaway profile as
# an unprivileged user (the extension manager refuses per-user installs as
# root: when run as root the test uses the user 'nobody'), then runs
# e2e_office.py as that user with the system Python (which has the uno
# module). Needs soffice, unopkg and python3-uno.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
repo="$(cd "$here/../../.." && pwd)"
program=""
picture=""
bench=""
while [ $# -gt 0 ]; do
    case "$1" in
        --program) program="$2"; shift 2 ;;
        --picture) picture="$2"; shift 2 ;;
        --bench) bench="$2"; shift 2 ;;
        *) echo "unknown option $1" >&2; exit 2 ;;
    esac
done
if [ -z "$program" ]; then
    (cd "$repo" && cargo build --release -p sidecar --bin trialyst)
    program="$repo/target/release/trialyst"
fi
for tool in soffice unopkg; do
    command -v "$tool" >/dev/null || { echo "run-e2e: $tool is not installed" >&2; exit 1; }
done
work="$(mktemp -d -t trialyst-addin-XXXXXX)"
trap 'rm -rf "$work"' EXIT
cp "$program" "$work/trialyst"
cp -r "$here" "$work/tests"
cp -r "$repo/sample-workbooks" "$work/samples"
python3 "$here/../build.py" "$work/trialyst.oxt" >/dev/null
mkdir -p "$work/run"
run_as=()
if [ "$(id -u)" = 0 ]; then
    chown -R nobody "$work"
    chmod 755 "$work"
    run_as=(setpriv --reuid=nobody --regid=nogroup --clear-groups --)
fi
export HOME="$work"
"${run_as[@]}" env HOME="$work" unopkg add -s "-env:UserInstallation=file://$work/profile" "$work/trialyst.oxt"
# With Xvfb installed, a second office runs with windows on a virtual display
# for the checks that need them (the menu clicked, the options page, the
# dialogs); without it those are skipped and said so.
display=""
xvfb_pid=""
if [ -z "$bench" ] && command -v Xvfb >/dev/null 2>&1; then
    number=$(( 100 + $$ % 800 ))
    while [ -e "/tmp/.X11-unix/X$number" ] || [ -e "/tmp/.X$number-lock" ]; do number=$((number + 1)); done
    "${run_as[@]}" Xvfb ":$number" -screen 0 1280x1024x24 -nolisten tcp >/dev/null 2>&1 &
    xvfb_pid=$!
    trap 'kill "$xvfb_pid" 2>/dev/null || true; rm -rf "$work"' EXIT
    for _ in $(seq 50); do [ -e "/tmp/.X11-unix/X$number" ] && break; sleep 0.1; done
    display=":$number"
fi
status=0
if [ -n "$bench" ]; then
    "${run_as[@]}" env HOME="$work" /usr/bin/python3 "$work/tests/bench_office.py" \
        --profile "$work/profile" --program "$work/trialyst" --runs "$bench"
    exit $?
fi
"${run_as[@]}" env HOME="$work" /usr/bin/python3 "$work/tests/e2e_office.py" \
    --profile "$work/profile" --program "$work/trialyst" --samples "$work/samples" --work "$work/run" \
    ${picture:+--picture "$work/run/out.png"} ${display:+--display "$display"} || status=$?
if [ -n "$picture" ] && [ -f "$work/run/out.png" ]; then cp "$work/run/out.png" "$picture"; fi
if [ "$status" != 0 ] && [ -f "$work/profile/user/trialyst-addin.log" ]; then
    echo "--- add-in log" >&2; tail -50 "$work/profile/user/trialyst-addin.log" >&2
fi
exit "$status"
