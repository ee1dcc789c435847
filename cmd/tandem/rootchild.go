package main

import (
	"os"

	"tandem/compare/rootfile"
)

// When tandem is started as a ROOT decoding child (a copy of itself that
// rootfile starts under a memory limit, marked by a hidden environment
// variable), it serves that one request and exits before main runs.
// Otherwise this turns on decoding in such children for every ROOT input.
func init() {
	if code, served := rootfile.Child(os.Stdin, os.Stdout); served {
		os.Exit(code)
	}
}
