package main

import (
	"bytes"
	"context"
	"strings"
	"testing"
)

// Every subcommand answers --help (and -h) on standard output with its
// usage line and exit 0; before, check and demo printed nothing (issue
// 20). The subcommand's own flags are listed.
func TestEverySubcommandHasHelp(t *testing.T) {
	cases := []struct {
		args []string
		want []string
	}{
		{[]string{"check", "--help"}, []string{"benchtender check CONFIG"}},
		{[]string{"run", "--help"}, []string{"benchtender run", "-include-old"}},
		{[]string{"holds", "-h"}, []string{"benchtender holds", "-config"}},
		{[]string{"approve", "--help"}, []string{"benchtender approve RUN", "-set"}},
		{[]string{"reject", "--help"}, []string{"benchtender reject RUN", "-reason"}},
		{[]string{"all-stop", "--help"}, []string{"benchtender all-stop", "-reason"}},
		{[]string{"resume", "--help"}, []string{"benchtender resume", "-name"}},
		{[]string{"refit", "--help"}, []string{"benchtender refit --by ID", "-reason"}},
		{[]string{"audit", "--help"}, []string{"benchtender audit verify", "benchtender audit correct"}},
		{[]string{"audit", "verify", "--help"}, []string{"benchtender audit verify"}},
		{[]string{"audit", "correct", "--help"}, []string{"benchtender audit correct", "-entry"}},
		{[]string{"status", "--help"}, []string{"benchtender status", "-config"}},
		{[]string{"report", "--help"}, []string{"benchtender report", "-out"}},
		{[]string{"export", "--help"}, []string{"benchtender export", "-json"}},
		{[]string{"parse", "--help"}, []string{"benchtender parse", "-format"}},
		{[]string{"demo", "--help"}, []string{"benchtender demo [--dir DIR] [--runs N] [--seed N] [--responses 1|2]", "-runs", "-seed", "-responses"}},
		{[]string{"version", "--help"}, []string{"benchtender version"}},
		{[]string{"service", "--help"}, []string{"benchtender service install", "benchtender service remove"}},
		{[]string{"audit", "accept", "--help"}, []string{"benchtender audit accept", "-reason"}},
	}
	for _, c := range cases {
		t.Run(strings.Join(c.args, " "), func(t *testing.T) {
			var out, errOut bytes.Buffer
			err := run(context.Background(), c.args, &out, &errOut)
			if code := exitCode(err, &errOut); code != 0 {
				t.Fatalf("exit %d: %v\n%s", code, err, errOut.String())
			}
			if !strings.HasPrefix(out.String(), "usage:") {
				t.Errorf("output does not start with the usage:\n%s", out.String())
			}
			for _, w := range c.want {
				if !strings.Contains(out.String(), w) {
					t.Errorf("output lacks %q:\n%s", w, out.String())
				}
			}
		})
	}
}

// version names the Go version and a commit (or says why it has none).
func TestVersion(t *testing.T) {
	for _, args := range [][]string{{"version"}, {"-version"}, {"--version"}} {
		var out bytes.Buffer
		if err := run(context.Background(), args, &out, &out); err != nil {
			t.Fatal(err)
		}
		if s := out.String(); !strings.HasPrefix(s, "benchtender ") || !strings.Contains(s, "commit ") || !strings.Contains(s, "go1.") {
			t.Errorf("%v printed %q", args, s)
		}
	}
}
