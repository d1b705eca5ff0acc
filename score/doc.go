// Package score turns an inverted index and a set of analysed target rows into one relevance score per pool row and explains each score as a sum of parts.
package score
