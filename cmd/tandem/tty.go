package main

import (
	"os"

	"golang.org/x/term"
)

// isTerminal reports whether f is a terminal (a console on Windows). A
// character device is not enough: /dev/null and /dev/zero are character
// devices too.
func isTerminal(f *os.File) bool { return term.IsTerminal(int(f.Fd())) }
