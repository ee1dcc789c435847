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

// JUnit writes one test suite per pair of chains, named after the
// campaign and the pair, e.g. "campaign muon: heron vs otter" (in table
// mode the pair alone), with one test case per observable and column, named
// "observable / column" (and its title when declared); a failing case
// carries its failed criteria, and an accepted disagreement says so.
func JUnit(w io.Writer, s *compare.Summary) error {
	name := s.Title
	if s.Campaign != "" {
		name = "campaign " + s.Campaign
	}
	if name == "" {
		name = "tandem cross-check"
	}
	out := junitSuites{Name: name}
	suiteOf := map[[2]string]int{}
	for _, e := range s.Entries {
		a, b := e.Sides()
		pair := [2]string{a, b}
		k, ok := suiteOf[pair]
		if !ok {
			k = len(out.Suites)
			suiteOf[pair] = k
			suite := fmt.Sprintf("%s vs %s", a, b)
			if s.Campaign != "" {
				suite = "campaign " + s.Campaign + ": " + suite
			}
			out.Suites = append(out.Suites, junitSuite{Name: suite})
		}
		caseName := e.Observable + " / " + e.Column
		if e.Title != "" {
			caseName += " (" + e.Title + ")"
		}
		c := junitCase{Name: caseName, Classname: "tandem." + e.Observable}
		var crit []string
		for _, cr := range e.Criteria {
			crit = append(crit, criterionLine(cr))
		}
		c.SystemOut = &junitText{Text: strings.Join(crit, "\n")}
		if !e.Pass {
			f := e.Failures()
			if len(f) == 0 {
				f = []string{"the comparison failed"}
			}
			text := strings.Join(f, "\n")
			for _, acc := range s.Accepted {
				text += fmt.Sprintf("\ndisagreement accepted by %s: %s", joinList(acc.By), acc.Reason)
			}
			c.Failure = &junitFailure{Message: f[0], Type: "disagreement", Text: text}
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
