#!/usr/bin/env bash
# End-to-end test of the LibreOffice add-in, headless.
#
#   sidecar/addin/tests/run-e2e.sh [--program TRIALYST] [--picture PNG]
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
while [ $# -gt 0 ]; do
    case "$1" in
        --program) program="$2"; shift 2 ;;
        --picture) picture="$2"; shift 2 ;;
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
status=0
"${run_as[@]}" env HOME="$work" /usr/bin/python3 "$work/tests/e2e_office.py" \
    --profile "$work/profile" --program "$work/trialyst" --samples "$work/samples" --work "$work/run" \
    ${picture:+--picture "$work/run/out.png"} || status=$?
if [ -n "$picture" ] && [ -f "$work/run/out.png" ]; then cp "$work/run/out.png" "$picture"; fi
if [ "$status" != 0 ] && [ -f "$work/profile/user/../trialyst-addin.log" ]; then
    echo "--- add-in log" >&2; tail -50 "$work/profile/trialyst-addin.log" >&2
fi
exit "$status"
