module github.com/cleave-seg/cleave

go 1.26.0

require (
	github.com/spf13/pflag v1.1.0 // indirect
	golang.org/x/image v0.48.0 // indirect
	gonum.org/v1/gonum v0.17.0 // indirect
)
