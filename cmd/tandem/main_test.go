package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rogpeppe/go-internal/testscript"
)

func TestMain(m *testing.M) {
	testscript.Main(m, map[string]func(){
		"tandem": func() { os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr)) },
	})
}

// TestScripts runs the workflow scripts in testdata/script: each is a
// txtar archive of commands and the files they use.
func TestScripts(t *testing.T) {
	// go-hep's ROOT test files, read where the module cache keeps them
	// (go-hep.org/x/hep v0.36.0); scripts name them as
	// $GOHEP_TESTDATA/groot/testdata/… and guard them with [gohep].
	out, err := exec.Command("go", "list", "-m", "-f", "{{.Dir}}", "go-hep.org/x/hep").Output()
	gohep := strings.TrimSpace(string(out))
	if (err != nil || gohep == "") && os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
		t.Fatalf("go-hep's test files are not in the module cache (go list -m go-hep.org/x/hep: %v)", err)
	}
	testscript.Run(t, testscript.Params{
		Dir: "testdata/script",
		Setup: func(env *testscript.Env) error {
			env.Setenv("NO_COLOR", "1")
			env.Setenv("TANDEM_ACTOR", "script")
			abs, err := filepath.Abs("../../testdata")
			if err != nil {
				return err
			}
			env.Setenv("TESTDATA", abs)
			env.Setenv("GOHEP_TESTDATA", gohep)
			return nil
		},
		Cmds: map[string]func(ts *testscript.TestScript, neg bool, args []string){
			// exits N CMD ARGS... runs a command and checks its exit status
			// (0 success, 1 disagreement or refusal, 2 bad usage or input).
			"exits": func(ts *testscript.TestScript, neg bool, args []string) {
				if neg || len(args) < 2 {
					ts.Fatalf("usage: exits N command [args...]")
				}
				quoted := make([]string, len(args)-1)
				for i, a := range args[1:] {
					quoted[i] = "'" + strings.ReplaceAll(a, "'", `'\''`) + "'"
				}
				err := ts.Exec("sh", "-c", strings.Join(quoted, " ")+`; echo "[exit $?]" >&2`)
				if err != nil {
					ts.Fatalf("%v", err)
				}
				if got := ts.ReadFile("stderr"); !strings.Contains(got, "[exit "+args[0]+"]") {
					ts.Fatalf("want exit status %s", args[0])
				}
			},
		},
		Condition: func(cond string) (bool, error) {
			// [tool:NAME] holds when NAME is on PATH.
			if cond == "gohep" { // go-hep's module, with its test files, is at hand
				return gohep != "", nil
			}
			if len(cond) > 5 && cond[:5] == "tool:" {
				_, err := exec.LookPath(cond[5:])
				return err == nil, nil
			}
			return false, nil
		},
	})
}

// TestSuggestCommand: a mistyped command gets the closest command (one
// edit, or two for names of five letters or more, a swap of neighbours
// counting as one), and nothing when none is close.
func TestSuggestCommand(t *testing.T) {
	for in, want := range map[string]string{
		"comapre": "compare", "compre": "compare", "reprot": "report", "stauts": "status",
		"unblnid": "unblind", "sing": "sign", "verfy": "verify", "rep": "report", "--sync": "sync",
		"frobnicate": "", "x": "", "": "",
	} {
		if got := suggestCommand(in); got != want {
			t.Errorf("suggestCommand(%q) = %q, want %q", in, got, want)
		}
	}
}

// TestPlaceholder: help never shows Go's type names for a flag's value.
func TestPlaceholder(t *testing.T) {
	for in, want := range map[string]string{"float": "X", "int": "N", "int64": "N", "string": "TEXT", "duration": "DURATION", "value": "VALUE", "FILE": "FILE"} {
		if got := placeholder(in); got != want {
			t.Errorf("placeholder(%q) = %q, want %q", in, got, want)
		}
	}
}
