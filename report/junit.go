package report

import (
	"encoding/xml"
	"fmt"
	"io"
	"strings"

	"tandem/compare"
)

type junitSuites struct {
	XMLName  xml.Name     `xml:"testsuites"`
	Name     string       `xml:"name,attr"`
	Tests    int          `xml:"tests,attr"`
	Failures int          `xml:"failures,attr"`
	Suites   []junitSuite `xml:"testsuite"`
}

type junitSuite struct {
	Name     string      `xml:"name,attr"`
	Tests    int         `xml:"tests,attr"`
	Failures int         `xml:"failures,attr"`
	Errors   int         `xml:"errors,attr"`
	Skipped  int         `xml:"skipped,attr"`
	Cases    []junitCase `xml:"testcase"`
}

type junitCase struct {
	Name      string        `xml:"name,attr"`
	Classname string        `xml:"classname,attr"`
	Failure   *junitFailure `xml:"failure,omitempty"`
	SystemOut *junitText    `xml:"system-out,omitempty"`
}

type junitFailure struct {
	Message string `xml:"message,attr"`
	Type    string `xml:"type,attr"`
	Text    string `xml:",cdata"`
}

// junitText keeps line breaks readable in the XML.
type junitText struct {
	Text string `xml:",cdata"`
}

// JUnit writes one test suite per observable with one test case per
// compared column (and team pair); a failing case carries its failed
// criteria.
func JUnit(w io.Writer, s *compare.Summary) error {
	name := s.Title
	if name == "" {
		name = "tandem cross-check"
	}
	out := junitSuites{Name: name}
	suiteOf := map[string]int{}
	for _, e := range s.Entries {
		k, ok := suiteOf[e.Observable]
		if !ok {
			k = len(out.Suites)
			suiteOf[e.Observable] = k
			out.Suites = append(out.Suites, junitSuite{Name: e.Observable})
		}
		caseName := e.Column
		if e.Teams[0] != "" {
			caseName += fmt.Sprintf(" (%s vs %s)", e.Teams[0], e.Teams[1])
		}
		c := junitCase{Name: caseName, Classname: "tandem." + e.Observable}
		var crit []string
		for _, cr := range e.Criteria {
			crit = append(crit, criterionLine(cr))
		}
		c.SystemOut = &junitText{Text: strings.Join(crit, "\n")}
		if !e.Pass {
			f := e.Failures()
			c.Failure = &junitFailure{Message: f[0], Type: "disagreement", Text: strings.Join(f, "\n")}
			out.Suites[k].Failures++
			out.Failures++
		}
		out.Suites[k].Tests++
		out.Tests++
		out.Suites[k].Cases = append(out.Suites[k].Cases, c)
	}
	if _, err := io.WriteString(w, xml.Header); err != nil {
		return err
	}
	enc := xml.NewEncoder(w)
	enc.Indent("", "  ")
	if err := enc.Encode(out); err != nil {
		return err
	}
	_, err := io.WriteString(w, "\n")
	return err
}
