// Package vectors reads embedding vectors (NumPy .npy files, JSONL, static word vectors) and scores pool rows by their cosine similarity to target rows.
package vectors
