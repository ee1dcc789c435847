package report

import (
	"encoding/xml"
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

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
	Name       string           `xml:"name,attr"`
	Tests      int              `xml:"tests,attr"`
	Failures   int              `xml:"failures,attr"`
	Errors     int              `xml:"errors,attr"`
	Skipped    int              `xml:"skipped,attr"`
	Properties *junitProperties `xml:"properties,omitempty"`
	Cases      []junitCase      `xml:"testcase"`
}

// junitProperties are a suite's properties: the report's stamp.
type junitProperties struct {
	Property []junitProperty `xml:"property"`
}

type junitProperty struct {
	Name  string `xml:"name,attr"`
	Value string `xml:"value,attr"`
}

type junitCase struct {
	Name      string        `xml:"name,attr"`
	Classname string        `xml:"classname,attr"`
	Failure   *junitFailure `xml:"failure,omitempty"`
	SystemOut *junitText    `xml:"system-out,omitempty"`
	SystemErr *junitText    `xml:"system-err,omitempty"`
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

// junitValue is the JUnit document of s.
func junitValue(s *Summary, stamp *Stamp) junitSuites {
	name := s.Title
	if s.Campaign != "" {
		name = "campaign " + s.Campaign
	}
	if name == "" {
		name = "tandem cross-check"
	}
	out := junitSuites{Name: name}
	var props *junitProperties
	if stamp != nil {
		props = &junitProperties{Property: []junitProperty{{"tandem.tool", stamp.Tool}, {"tandem.time", stampTime(stamp.Time)}}}
		for _, in := range stamp.Inputs {
			props.Property = append(props.Property, junitProperty{"tandem.input.sha256", in.SHA256 + " " + in.Name})
		}
	}
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
			out.Suites = append(out.Suites, junitSuite{Name: suite, Properties: props})
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
		if len(e.Warnings) > 0 {
			c.SystemErr = &junitText{Text: "warning: " + strings.Join(e.Warnings, "\nwarning: ")}
		}
		if !e.Pass {
			f := e.Failures()
			if len(f) == 0 {
				f = []string{"the comparison failed"}
			}
			text := strings.Join(f, "\n")
			for _, acc := range s.Accepted {
				text += fmt.Sprintf("\ndisagreement accepted by %s: %s", joinList(acc.By), acc.Reason)
			}
			c.Failure = &junitFailure{Message: f[0], Type: compare.VerdictFail, Text: text}
			out.Suites[k].Failures++
			out.Failures++
		}
		out.Suites[k].Tests++
		out.Tests++
		out.Suites[k].Cases = append(out.Suites[k].Cases, c)
	}
	// Each missing comparison and each stale sign-off is a failing case of
	// its own: CI systems show skipped cases as green, and a campaign
	// that is not complete must not look green.
	if len(s.Missing)+len(s.Stale) > 0 {
		suite := junitSuite{Name: "campaign " + s.Campaign + ": state", Properties: props}
		if s.Campaign == "" {
			suite.Name = "state"
		}
		for _, m := range s.Missing {
			msg := m.Observable + " is " + m.Verdict + ": " + m.Reason
			suite.Cases = append(suite.Cases, junitCase{Name: m.Observable + " (" + m.Verdict + ")", Classname: "tandem." + m.Observable,
				Failure: &junitFailure{Message: msg, Type: m.Verdict, Text: "no comparison of " + m.Observable + " yet: " + m.Reason}})
		}
		for _, x := range s.Stale {
			party, _, _ := strings.Cut(x, ":")
			suite.Cases = append(suite.Cases, junitCase{Name: "sign-off of " + party + " (" + VerdictStale + ")", Classname: "tandem.signoff",
				Failure: &junitFailure{Message: "stale sign-off: " + x, Type: VerdictStale, Text: "stale sign-off: " + x}})
		}
		suite.Tests, suite.Failures = len(suite.Cases), len(suite.Cases)
		out.Tests += suite.Tests
		out.Failures += suite.Failures
		out.Suites = append(out.Suites, suite)
	}
	junitTeams(&out, s)
	return out
}

// JUnit writes one test suite per pair of chains, named after the
// campaign and the pair, e.g. "campaign muon: heron vs otter" (in table
// mode the pair alone), with one test case per observable and column, named
// "observable / column" (and its title when declared); a failing case
// carries its failed criteria, and an accepted disagreement says so.
func JUnit(w io.Writer, s *Summary, st Style) error {
	out := junitValue(s, st.Stamp)
	p := newPage(w, 1024+512*len(s.Entries))
	p.s(xml.Header)
	writeJUnit(p, &out)
	p.s("\n")
	return p.flush()
}

// writeJUnit writes the suites as encoding/xml's Encoder with Indent("",
// "  ") writes them (TestJUnitWriterMatchesEncoding holds it to that),
// without its reflection.
func writeJUnit(p *page, out *junitSuites) {
	p.s(`<testsuites name="`).xmlAttr(out.Name).s(`" tests="`).d(out.Tests).s(`" failures="`).d(out.Failures).s(`">`)
	if len(out.Suites) == 0 {
		p.s("</testsuites>")
		return
	}
	for _, su := range out.Suites {
		p.s("\n  <testsuite name=\"").xmlAttr(su.Name).s(`" tests="`).d(su.Tests).s(`" failures="`).d(su.Failures).
			s(`" errors="`).d(su.Errors).s(`" skipped="`).d(su.Skipped).s(`">`)
		if len(su.Cases) == 0 && su.Properties == nil {
			p.s("</testsuite>")
			continue
		}
		if pr := su.Properties; pr != nil {
			p.s("\n    <properties>")
			if len(pr.Property) == 0 {
				p.s("</properties>")
			} else {
				for _, x := range pr.Property {
					p.s("\n      <property name=\"").xmlAttr(x.Name).s(`" value="`).xmlAttr(x.Value).s(`"></property>`)
				}
				p.s("\n    </properties>")
			}
		}
		for _, c := range su.Cases {
			p.s("\n    <testcase name=\"").xmlAttr(c.Name).s(`" classname="`).xmlAttr(c.Classname).s(`">`)
			if c.Failure == nil && c.SystemOut == nil && c.SystemErr == nil {
				p.s("</testcase>")
				continue
			}
			if f := c.Failure; f != nil {
				p.s("\n      <failure message=\"").xmlAttr(f.Message).s(`" type="`).xmlAttr(f.Type).s(`">`).cdata(f.Text).s("</failure>")
			}
			if o := c.SystemOut; o != nil {
				p.s("\n      <system-out>").cdata(o.Text).s("</system-out>")
			}
			if o := c.SystemErr; o != nil {
				p.s("\n      <system-err>").cdata(o.Text).s("</system-err>")
			}
			p.s("\n    </testcase>")
		}
		p.s("\n  </testsuite>")
	}
	p.s("\n</testsuites>")
}

// xmlAttr appends s escaped as encoding/xml escapes text: the five XML
// specials, tab, line feed and carriage return as character references,
// and each character outside XML's range (and each byte that is not
// UTF-8) as U+FFFD.
func (p *page) xmlAttr(s string) *page {
	start := 0
	for i := 0; i < len(s); {
		r, n := rune(s[i]), 1
		if r >= utf8.RuneSelf {
			r, n = utf8.DecodeRuneInString(s[i:])
		}
		var esc string
		switch r {
		case '"':
			esc = "&#34;"
		case '\'':
			esc = "&#39;"
		case '&':
			esc = "&amp;"
		case '<':
			esc = "&lt;"
		case '>':
			esc = "&gt;"
		case '\t':
			esc = "&#x9;"
		case '\n':
			esc = "&#xA;"
		case '\r':
			esc = "&#xD;"
		default:
			if !xmlChar(r) || (r == utf8.RuneError && n == 1) {
				esc = "\uFFFD"
				break
			}
			i += n
			continue
		}
		p.s(s[start:i]).s(esc)
		i += n
		start = i
	}
	return p.s(s[start:])
}

// xmlChar reports whether r is a character XML allows (XML 1.0, Char).
func xmlChar(r rune) bool {
	return r == 0x09 || r == 0x0a || r == 0x0d || r >= 0x20 && r <= 0xd7ff || r >= 0xe000 && r <= 0xfffd || r >= 0x10000 && r <= 0x10ffff
}

// cdata appends s as a CDATA section, as encoding/xml writes one: nothing
// for an empty s, and each "]]>" inside split over two sections.
func (p *page) cdata(s string) *page {
	if s == "" {
		return p
	}
	p.s("<![CDATA[")
	for {
		before, after, ok := strings.Cut(s, "]]>")
		if !ok {
			break
		}
		p.s(before).s("]]]]><![CDATA[>")
		s = after
	}
	return p.s(s).s("]]>")
}
