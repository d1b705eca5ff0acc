# The setup the bench scripts share; each sources this file.

# bench_setup [SHARED_DIR] sets root (the checkout), shared (SHARED_DIR, default ../shared beside
# the checkout), work (a new folder, removed when the script exits), S (sluice built from the
# checkout into work) and t0 (the folder of the shared T0 files), and moves to root.
bench_setup() {
	root=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)
	shared=${1:-$root/../shared}
	work=$(mktemp -d "${TMPDIR:-/tmp}/sluice-bench.XXXXXX")
	trap 'rm -rf "$work"' EXIT
	cd "$root"
	go build -o "$work/sluice" ./cmd/sluice
	S=$work/sluice
	t0=$shared/data/t0-train-50k-per-template/data_per_template
}

# t0_pool COPIES OUT writes the shared T0 files, concatenated, COPIES times over to OUT (17 copies
# make the 1 GB pool).
t0_pool() {
	cat "$t0"/*.jsonl >"$work/t0.jsonl"
	for _ in $(seq 1 "$1"); do cat "$work/t0.jsonl"; done >"$2"
	rm "$work/t0.jsonl"
}
