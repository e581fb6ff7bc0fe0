package pglocal

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
)

// ErrNoBinaries is wrapped by the error FindBinaries returns when no directory
// holds all of the PostgreSQL server programs the cluster needs.
var ErrNoBinaries = errors.New("PostgreSQL server binaries not found")

// requiredPrograms are the programs Start runs; pg_ctl execs postgres from its
// own directory, so all three must sit side by side.
var requiredPrograms = []string{"initdb", "pg_ctl", "postgres"}

// defaultSearchGlob is where Debian and Ubuntu packages install one directory
// per major version (common practice).
const defaultSearchGlob = "/usr/lib/postgresql/*/bin"

// FindBinaries returns the directory holding initdb, pg_ctl and postgres: the
// first PATH entry that has all three, else the highest major version under
// /usr/lib/postgresql/*/bin. The error wraps ErrNoBinaries and says what to do.
func FindBinaries() (dir string, err error) {
	return findBinaries(os.Getenv("PATH"), defaultSearchGlob)
}

// findBinaries is FindBinaries with the PATH value and the search glob given,
// so tests can point it at a tree they build.
func findBinaries(pathEnv, searchGlob string) (string, error) {
	if dir, ok := findOnPath(pathEnv); ok {
		return dir, nil
	}
	candidates, err := filepath.Glob(searchGlob)
	if err != nil {
		return "", fmt.Errorf("pglocal: bad search pattern %q: %w", searchGlob, err)
	}
	// Highest major first; "9.6" must sort below "14", so compare numerically.
	sort.SliceStable(candidates, func(i, j int) bool {
		return versionLess(versionOf(candidates[j]), versionOf(candidates[i]))
	})
	for _, dir := range candidates {
		if hasAll(dir) {
			return dir, nil
		}
	}
	return "", fmt.Errorf("%w: initdb, pg_ctl and postgres are not on PATH or in %s: "+
		"install them (Debian/Ubuntu: apt-get install postgresql; Fedora: dnf install postgresql-server) "+
		"or set DATABASE_URL to an existing server",
		ErrNoBinaries, searchGlob)
}

// findOnPath looks for a PATH entry holding all required programs. Symlinks
// (e.g. /usr/local/bin/initdb -> /usr/lib/postgresql/15/bin/initdb) are
// resolved so the returned directory is the real installation.
func findOnPath(pathEnv string) (string, bool) {
	for _, entry := range filepath.SplitList(pathEnv) {
		if entry == "" {
			continue
		}
		var real string
		ok := true
		for _, prog := range requiredPrograms {
			p := filepath.Join(entry, prog)
			if !isExecutable(p) {
				ok = false
				break
			}
			resolved, err := filepath.EvalSymlinks(p)
			if err != nil {
				ok = false
				break
			}
			d := filepath.Dir(resolved)
			if real == "" {
				real = d
			} else if real != d {
				// Programs from different installations would mix versions.
				ok = false
				break
			}
		}
		if ok && real != "" && hasAll(real) {
			return real, true
		}
	}
	return "", false
}

func hasAll(dir string) bool {
	for _, prog := range requiredPrograms {
		if !isExecutable(filepath.Join(dir, prog)) {
			return false
		}
	}
	return true
}

func isExecutable(path string) bool {
	fi, err := os.Stat(path)
	return err == nil && fi.Mode().IsRegular() && fi.Mode().Perm()&0o111 != 0
}

// versionOf extracts the version numbers from a ".../<version>/bin" path;
// unparsable names get an empty version and sort last.
func versionOf(binDir string) []int {
	name := filepath.Base(filepath.Dir(binDir))
	var v []int
	for _, part := range strings.Split(name, ".") {
		n, err := strconv.Atoi(part)
		if err != nil {
			return nil
		}
		v = append(v, n)
	}
	return v
}

func versionLess(a, b []int) bool {
	for i := 0; i < len(a) && i < len(b); i++ {
		if a[i] != b[i] {
			return a[i] < b[i]
		}
	}
	return len(a) < len(b)
}
