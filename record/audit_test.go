package record

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// testKey keys the trails these tests write by hand.
var testKey = []byte("0123456789abcdef0123456789abcdef")

func writeTrail(t *testing.T, n int) (string, []string) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "audit.log")
	a, _, err := OpenAudit(path, testKey)
	if err != nil {
		t.Fatal(err)
	}
	now := time.Date(2026, 12, 1, 22, 0, 0, 0, time.UTC)
	for i := 0; i < n; i++ {
		if _, err := a.Append(AuditEntry{Actor: "ada", Name: "Ada Tech", Action: "approve", Subject: "R000" + string(rune('1'+i)), Reason: "checked", Meaning: "approval"}, now.Add(time.Duration(i)*time.Minute)); err != nil {
			t.Fatal(err)
		}
	}
	a.Close()
	data, _ := os.ReadFile(path)
	return path, strings.SplitAfter(strings.TrimSuffix(string(data), "\n"), "\n")
}

// The audit trail's hash chain detects an edited, a deleted and a
// reordered entry, as 21 CFR Part 11 §11.10(e) asks of an audit trail
// (secure, computer-generated, time-stamped; changes must not obscure
// earlier entries), and reopening goes on from the last entry.
func TestAuditVerifyDetectsTampering(t *testing.T) {
	path, lines := writeTrail(t, 4)
	if n, err := VerifyAudit(path, testKey); err != nil || n != 4 {
		t.Fatalf("intact trail: %d entries, %v", n, err)
	}
	join := func(ls []string) string {
		s := strings.Join(ls, "")
		if !strings.HasSuffix(s, "\n") {
			s += "\n"
		}
		return s
	}
	cases := map[string]string{
		"edited":        join(append(append([]string{}, lines[:2]...), append([]string{strings.Replace(lines[2], `"reason":"checked"`, `"reason":"looks fine"`, 1)}, lines[3:]...)...)),
		"deleted":       join(append(append([]string{}, lines[:1]...), lines[2:]...)),
		"reordered":     join([]string{lines[0], lines[2], lines[1], lines[3]}),
		"cut mid-entry": join(append(append([]string{}, lines[:2]...), lines[2][:40]+"\n", lines[3])),
	}
	for name, content := range cases {
		t.Run(name, func(t *testing.T) {
			p := filepath.Join(t.TempDir(), "audit.log")
			os.WriteFile(p, []byte(content), 0o644)
			if _, err := VerifyAudit(p, testKey); !errors.Is(err, ErrAuditBroken) {
				t.Fatalf("%s trail: %v, want ErrAuditBroken", name, err)
			}
			if _, _, err := OpenAudit(p, testKey); err == nil {
				t.Fatalf("a %s trail was opened for appending", name)
			}
		})
	}
	a, _, err := OpenAudit(path, testKey)
	if err != nil {
		t.Fatal(err)
	}
	if e, err := a.Append(AuditEntry{Actor: "benchtender", Action: "handoff", Subject: "R0005"}, time.Now()); err != nil || e.Seq != 5 {
		t.Fatalf("append after reopen: %+v %v", e, err)
	}
	a.Close()
	if n, err := VerifyAudit(path, testKey); err != nil || n != 5 {
		t.Fatalf("after reopen: %d, %v", n, err)
	}
}

// A last entry torn by a crash (no line end) is cut off at open, and the
// entries before it keep verifying; verify alone reports it as torn.
func TestAuditTornTailIsCut(t *testing.T) {
	path, lines := writeTrail(t, 3)
	torn := strings.Join(lines[:2], "") + lines[2][:30]
	os.WriteFile(path, []byte(torn), 0o644)
	if _, err := VerifyAudit(path, testKey); !errors.Is(err, ErrAuditTorn) {
		t.Fatalf("verify: %v, want ErrAuditTorn", err)
	}
	a, cut, err := OpenAudit(path, testKey)
	if err != nil || !cut {
		t.Fatalf("open: cut %v, %v", cut, err)
	}
	a.Close()
	if n, err := VerifyAudit(path, testKey); err != nil || n != 2 {
		t.Fatalf("after the cut: %d entries, %v", n, err)
	}
}
