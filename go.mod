module sluice

go 1.26.8

require (
	github.com/blevesearch/bleve/v2 v2.6.3
	github.com/blevesearch/go-porterstemmer v1.0.3
	github.com/klauspost/compress v1.20.4
	github.com/schollz/progressbar/v3 v3.19.1
	github.com/spf13/pflag v1.1.0
	github.com/valyala/fastjson v1.6.10
	golang.org/x/sys v0.46.0
	golang.org/x/term v0.44.0
)

require (
	github.com/RoaringBitmap/roaring/v2 v2.14.5 // indirect
	github.com/bits-and-blooms/bitset v1.24.2 // indirect
	github.com/blevesearch/bleve_index_api v1.4.1 // indirect
	github.com/blevesearch/geo v0.2.8 // indirect
	github.com/blevesearch/segment v0.9.1 // indirect
	github.com/blevesearch/snowballstem v0.9.0 // indirect
	github.com/blevesearch/upsidedown_store_api v1.0.2 // indirect
	github.com/json-iterator/go v0.0.0-20171115153421-f7279a603ede // indirect
	github.com/mitchellh/colorstring v0.0.0-20190213212951-d06e56a500db // indirect
	github.com/mschoch/smat v0.2.0 // indirect
	github.com/rivo/uniseg v0.4.7 // indirect
	go.etcd.io/bbolt v1.4.0 // indirect
)
