// Package tokens counts the tokens that a byte-level BPE tokenizer, read from a local tokenizer.json or GPT-2 vocab.json and merges.txt, makes of a text.
package tokens
