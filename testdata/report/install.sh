#!/usr/bin/env bash
# Installs what cmd/sluice/report_test.go's browser check needs on a fresh Debian machine:
# Debian's Chromium at /usr/bin/chromium and playwright-core (which drives it; it never downloads a
# browser of its own) under testdata/report/node_modules. Run it from anywhere; a second run with
# everything in place does nothing and takes well under a second.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
want="$(sed -n 's/.*"playwright-core": *"\([^"]*\)".*/\1/p' "$here/package.json")"

if [ ! -x /usr/bin/chromium ] || ! command -v node >/dev/null || ! command -v npm >/dev/null; then
	pkgs=(chromium)
	command -v node >/dev/null || pkgs+=(nodejs)
	command -v npm >/dev/null || pkgs+=(npm)
	sudo=""
	[ "$(id -u)" -eq 0 ] || sudo="sudo"
	$sudo apt-get update -q
	DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -q --no-install-recommends "${pkgs[@]}"
fi

have="$(node -e 'try { console.log(require(process.argv[1]).version) } catch { }' \
	"$here/node_modules/playwright-core/package.json")"
if [ "$have" != "$want" ]; then
	# PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD: playwright-core fetches no browser anyway; this makes sure.
	# No lock file: package.json pins the one exact version, and a lock file would only add addresses.
	PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD=1 npm install --prefix "$here" --no-audit --no-fund --no-package-lock
fi

/usr/bin/chromium --version 2>/dev/null || echo "chromium: installed, but --version failed"
echo "playwright-core $(node -e 'console.log(require(process.argv[1]).version)' "$here/node_modules/playwright-core/package.json")"
