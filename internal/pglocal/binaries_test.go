package pglocal

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// fakeInstall makes dir/<prog> executables (empty shell scripts) for progs.
func fakeInstall(t *testing.T, dir string, progs ...string) {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, p := range progs {
		if err := os.WriteFile(filepath.Join(dir, p), []byte("#!/bin/sh\n"), 0o755); err != nil {
			t.Fatal(err)
		}
	}
}

func TestFindBinariesMissing(t *testing.T) {
	root := t.TempDir()
	fakeInstall(t, filepath.Join(root, "15", "bin"), "initdb", "pg_ctl") // no postgres
	_, err := findBinaries("", filepath.Join(root, "*", "bin"))
	if !errors.Is(err, ErrNoBinaries) {
		t.Fatalf("err = %v, want ErrNoBinaries", err)
	}
	// The message must tell the user both ways out.
	for _, want := range []string{"initdb", "pg_ctl", "apt-get install postgresql", "DATABASE_URL"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("message %q lacks %q", err, want)
		}
	}
}

func TestFindBinariesHighestMajor(t *testing.T) {
	root := t.TempDir()
	all := []string{"initdb", "pg_ctl", "postgres"}
	fakeInstall(t, filepath.Join(root, "9.6", "bin"), all...)
	fakeInstall(t, filepath.Join(root, "14", "bin"), all...)
	fakeInstall(t, filepath.Join(root, "16", "bin"), all...)
	fakeInstall(t, filepath.Join(root, "17", "bin"), "initdb") // incomplete: skipped
	got, err := findBinaries("", filepath.Join(root, "*", "bin"))
	if err != nil {
		t.Fatal(err)
	}
	// 16 beats 14 and 9.6 (a string sort would pick 9.6); 17 is incomplete.
	if want := filepath.Join(root, "16", "bin"); got != want {
		t.Errorf("got %s, want %s", got, want)
	}
}

func TestFindBinariesOnPathResolvesLinks(t *testing.T) {
	root := t.TempDir()
	real := filepath.Join(root, "pg", "bin")
	fakeInstall(t, real, "initdb", "pg_ctl", "postgres")
	linkDir := filepath.Join(root, "local", "bin")
	partial := filepath.Join(root, "partial")
	fakeInstall(t, partial, "initdb", "pg_ctl")
	if err := os.MkdirAll(linkDir, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, p := range requiredPrograms {
		if err := os.Symlink(filepath.Join(real, p), filepath.Join(linkDir, p)); err != nil {
			t.Fatal(err)
		}
	}
	glob := filepath.Join(root, "none", "*", "bin")
	pathEnv := strings.Join([]string{partial, linkDir}, string(os.PathListSeparator))
	got, err := findBinaries(pathEnv, glob)
	if err != nil {
		t.Fatal(err)
	}
	if want, _ := filepath.EvalSymlinks(real); got != want {
		t.Errorf("got %s, want %s (the partial PATH entry must be skipped, links resolved)", got, want)
	}
}

func TestFindBinariesPathBeatsSearchRoot(t *testing.T) {
	root := t.TempDir()
	all := []string{"initdb", "pg_ctl", "postgres"}
	onPath := filepath.Join(root, "path")
	fakeInstall(t, onPath, all...)
	fakeInstall(t, filepath.Join(root, "lib", "16", "bin"), all...)
	got, err := findBinaries(onPath, filepath.Join(root, "lib", "*", "bin"))
	if err != nil {
		t.Fatal(err)
	}
	if want, _ := filepath.EvalSymlinks(onPath); got != want {
		t.Errorf("got %s, want the PATH entry %s", got, want)
	}
}

func TestCanEnter(t *testing.T) {
	const me, mine, other = 101, 104, 0
	tests := []struct {
		name      string
		perm      os.FileMode
		uid, gid  int
		wantEnter bool
	}{
		{"root-only dir like t.TempDir parents", 0o700, other, other, false},
		{"world-enterable", 0o755, other, other, true},
		{"owned by us", 0o700, me, other, true},
		{"group match", 0o750, other, mine, true},
		{"group match without x", 0o740, other, mine, false},
		{"owner bits win over other bits", 0o007, me, other, false},
	}
	for _, tc := range tests {
		if got := canEnter(tc.perm, tc.uid, tc.gid, me, mine); got != tc.wantEnter {
			t.Errorf("%s: canEnter = %v, want %v", tc.name, got, tc.wantEnter)
		}
	}
}
