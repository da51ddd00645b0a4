package main

import (
	_ "github.com/gocarina/gocsv"
	_ "github.com/schollz/progressbar/v3"
	_ "github.com/spf13/pflag"
	_ "golang.org/x/term"
	_ "gonum.org/v1/gonum/mat"
	_ "gonum.org/v1/plot"
	_ "gonum.org/v1/plot/cmpimg"
)

func main() {}
