// Package ngram trains interpolated Kneser–Ney n-gram language models on analysed rows and scores rows by how much more likely a target-task model finds them than a pool model.
package ngram
