module github.com/cleave-seg/cleave

go 1.26
