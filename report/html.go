package report

import (
	"errors"
	"io"

	"tandem/compare"
)

// HTML is implemented with the figures (see html_figures.go).
func HTML(w io.Writer, s *compare.Summary) error { return errors.New("html reports are not built yet") }
