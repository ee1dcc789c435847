package report

import (
	"bytes"
	"encoding/xml"
	"io"
	"testing"
)

// junitEncoded writes s through encoding/xml, as [JUnit] did before it
// wrote the document by hand; the tests hold JUnit to it.
func junitEncoded(w io.Writer, s *Summary, st Style) error {
	if _, err := io.WriteString(w, xml.Header); err != nil {
		return err
	}
	enc := xml.NewEncoder(w)
	enc.Indent("", "  ")
	if err := enc.Encode(junitValue(s, st.Stamp)); err != nil {
		return err
	}
	_, err := io.WriteString(w, "\n")
	return err
}

func checkJUnit(t *testing.T, name string, s *Summary) {
	t.Helper()
	for _, st := range []Style{{}, {Stamp: testStamp()}} {
		var got, want bytes.Buffer
		if err := JUnit(&got, s, st); err != nil {
			t.Fatal(err)
		}
		if err := junitEncoded(&want, s, st); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want.Bytes()) {
			t.Errorf("%s: JUnit differs from encoding/xml:\n got %q\nwant %q", name, got.Bytes(), want.Bytes())
		}
	}
}

// TestJUnitWriterMatchesEncoding: the hand-written JUnit XML is byte for
// byte what encoding/xml (the reference) writes, also for free text with
// XML specials, line breaks, "]]>", characters outside XML's range and
// bytes that are not UTF-8, and for an empty summary.
func TestJUnitWriterMatchesEncoding(t *testing.T) {
	for name, s := range jsonSummaries(t) {
		checkJUnit(t, name, s)
	}
	s := fixture(t)
	s.Campaign = "a\"b'c&d<e>f\tg\nh\ri\x00j\x1bk\ufffd\xffl\U0001F600m\uffff"
	s.Accepted = []Acceptance{{By: []string{"x]]>y"}, Reason: "end ]]> and ]]]]> twice ]]>"}}
	r := *s.Entries[1].Result
	r.Column = "c]]>d & <e>"
	s.Entries[1].Result = &r
	checkJUnit(t, "specials", s)
}

// FuzzJUnitWriter holds the JUnit writer to encoding/xml for any free
// text.
func FuzzJUnitWriter(f *testing.F) {
	f.Add("campaign", "observable", "reason ]]> <&>")
	f.Add("\xff\x00", "\t\r\n", "\ufffd\uffff")
	f.Fuzz(func(t *testing.T, campaign, observable, reason string) {
		s := fixture(t)
		s.Campaign, s.Title = campaign, observable
		s.Entries[0].Observable, s.Entries[1].Title = observable, reason
		s.Accepted = []Acceptance{{By: []string{campaign, reason}, Reason: reason}}
		checkJUnit(t, "fuzz", s)
	})
}
