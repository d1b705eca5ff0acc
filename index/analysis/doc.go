// Package analysis turns text into index terms with bleve's analyzer chains, through a fast path that yields exactly the same terms.
package analysis
