package record

import (
	"os"
	"path/filepath"
	"testing"
)

func TestWriteFileAtomicLeavesNoTemp(t *testing.T) {
	dir := t.TempDir()
	if err := WriteFileAtomic(dir, "R0001.csv", []byte("a"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := WriteFileAtomic(dir, "R0001.csv", []byte("b"), 0o644); err != nil {
		t.Fatal(err)
	}
	names, _ := os.ReadDir(dir)
	if len(names) != 1 || names[0].Name() != "R0001.csv" {
		t.Fatalf("folder holds %v", names)
	}
	if got, _ := os.ReadFile(filepath.Join(dir, "R0001.csv")); string(got) != "b" {
		t.Errorf("content %q", got)
	}
}

func TestSweepTempRemovesOnlyOurTempFiles(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{".benchtender-R0001.csv.123.tmp", "R0002.csv", ".other.tmp", ".benchtender-notes.txt"} {
		if err := os.WriteFile(filepath.Join(dir, n), []byte("run,action\nR0001,R0001-9\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	removed, err := SweepTemp(dir)
	if err != nil || len(removed) != 1 || removed[0].Name != ".benchtender-R0001.csv.123.tmp" || removed[0].Head != "run,action\nR0001,R0001-9\n" {
		t.Fatalf("removed %v, %v", removed, err)
	}
	left, _ := os.ReadDir(dir)
	if len(left) != 3 {
		t.Errorf("left %v", left)
	}
}
