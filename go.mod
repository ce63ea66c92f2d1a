module github.com/filigree-survey/filigree

go 1.26.8

require (
	github.com/apache/arrow/go/v15 v15.0.2 // indirect
	github.com/astrogo/fitsio v0.3.0 // indirect
	github.com/spf13/pflag v1.1.0 // indirect
	golang.org/x/sys v0.50.0 // indirect
	golang.org/x/term v0.48.0 // indirect
	gonum.org/v1/gonum v0.17.0 // indirect
)
