package report

import (
	"runtime/debug"
	"strings"
	"time"
)

// Version names the tool's version in report stamps. Builds without VCS
// information set it at link time:
//
//	go build -ldflags "-X main.Version=v1.2.3" ./cmd/tandem
//
// (cmd/tandem copies its Version here), or directly with
// -X tandem/report.Version=v1.2.3. When it is empty the stamp takes the
// module version and the VCS revision from [debug.ReadBuildInfo].
var Version = ""

// Stamp says what made a report, when, and from which inputs: a review
// record needs all three.
type Stamp struct {
	// Tool is the tool's name, version and revision, as [Tool] gives it.
	Tool string
	// Time is when the report was made, in UTC.
	Time time.Time
	// Inputs are the files the report compares, in order.
	Inputs []Input
}

// Input is one input file of a report and the SHA-256 of its bytes.
type Input struct {
	// Name is the file as the user gave it (a campaign-relative path in a
	// campaign).
	Name string
	// SHA256 is the digest in lowercase hex; empty when not known.
	SHA256 string
}

// NewStamp stamps a report made now by this build from inputs.
func NewStamp(inputs ...Input) *Stamp {
	return &Stamp{Tool: Tool(), Time: time.Now().UTC().Truncate(time.Second), Inputs: inputs}
}

// Build is what the binary records of itself: the version (the link-time
// [Version], else the module version, else "(devel)"), the VCS revision
// (12 digits) and time, whether the tree was modified, and the Go
// version. Revision and time are empty when the build recorded none or a
// pseudo-version already names them.
type Build struct {
	Version, Revision, Time, Go string
	Modified                    bool
}

// ReadBuild reads the build information of the running binary.
func ReadBuild() Build {
	b := Build{Version: Version}
	bi, ok := debug.ReadBuildInfo()
	if b.Version == "" && ok {
		b.Version = bi.Main.Version
	}
	if b.Version == "" {
		b.Version = "(devel)"
	}
	if !ok {
		return b
	}
	b.Go = bi.GoVersion
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			b.Revision = s.Value
		case "vcs.time":
			b.Time = s.Value
		case "vcs.modified":
			b.Modified = s.Value == "true"
		}
	}
	if len(b.Revision) > 12 {
		b.Revision = b.Revision[:12]
	}
	if b.Revision != "" && strings.Contains(b.Version, b.Revision) {
		b.Revision, b.Time = "", "" // a pseudo-version already names them
	}
	return b
}

// Tool is "tandem VERSION", followed by the VCS revision (12 digits) and
// "modified" when the build recorded them, e.g. "tandem (devel)
// 7c97d86e2b1f modified".
func Tool() string {
	b := ReadBuild()
	out := "tandem " + b.Version
	if b.Revision != "" {
		out += " " + b.Revision
	}
	if b.Modified {
		out += " modified"
	}
	return out
}

// stampTime writes t as RFC 3339 in UTC, to the second.
func stampTime(t time.Time) string { return t.UTC().Format(time.RFC3339) }

// stampLines are the stamp in words, one line each: who made the report
// and when, then each input with its digest.
func stampLines(st *Stamp) []string {
	if st == nil {
		return nil
	}
	out := []string{"made by " + st.Tool + " at " + stampTime(st.Time)}
	for _, in := range st.Inputs {
		d := in.SHA256
		if d == "" {
			d = "(digest not known)"
		}
		out = append(out, "input "+in.Name+" sha256 "+d)
	}
	return out
}
