// Package analysis turns text into index terms with named analyzer chains: bleve's (english,
// plain, english-nostem) and scikit-learn's default (sklearn), each through a fast path that yields
// exactly the same terms as the chain's reference.
package analysis
