package main

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"syscall"
	"testing"
	"time"
)

// walkSection is the README section a newcomer pastes in order.
const walkSection = "## A first walk through the API"

// walkAddrLine is the one line the test changes: the demo it starts listens
// on a free port, not on the README's 127.0.0.1:8080.
const walkAddrLine = "export RW=http://127.0.0.1:8080"

// walkBlocks returns the ```sh blocks of the README's walkthrough section,
// in order.
func walkBlocks(readme string) ([]string, error) {
	start := strings.Index(readme, "\n"+walkSection+"\n")
	if start < 0 {
		return nil, fmt.Errorf("README.md has no %q section", walkSection)
	}
	section := readme[start+len(walkSection)+2:]
	if end := strings.Index(section, "\n## "); end >= 0 {
		section = section[:end]
	}
	var blocks []string
	var cur []string
	in := false
	for _, line := range strings.Split(section, "\n") {
		switch {
		case !in && strings.TrimSpace(line) == "```sh":
			in, cur = true, nil
		case in && strings.TrimSpace(line) == "```":
			in = false
			blocks = append(blocks, strings.Join(cur, "\n"))
		case in:
			cur = append(cur, line)
		}
	}
	if in {
		return nil, fmt.Errorf("an unclosed ```sh block in %q", walkSection)
	}
	if len(blocks) == 0 {
		return nil, fmt.Errorf("no ```sh blocks in %q", walkSection)
	}
	return blocks, nil
}

// withoutComments blanks shell comments (a # starting a word outside
// quotes), keeping lines in place; quotes may span lines.
func withoutComments(script string) string {
	var b strings.Builder
	var quote byte
	comment := false
	for i := 0; i < len(script); i++ {
		c := script[i]
		switch {
		case c == '\n':
			comment = false
		case comment:
			continue
		case quote == 0 && c == '#' && (i == 0 || strings.IndexByte(" \t\n;(", script[i-1]) >= 0):
			comment = true
			continue
		case quote == '"' && c == '\\' && i+1 < len(script):
			b.WriteByte(c)
			i++
			c = script[i]
		case quote == 0 && (c == '\'' || c == '"'):
			quote = c
		case quote != 0 && c == quote:
			quote = 0
		}
		b.WriteByte(c)
	}
	return b.String()
}

var (
	// A line announcing a status other than 2xx: it prints the status alone
	// (curl -w '%{http_code}') and the test checks it.
	expectRe = regexp.MustCompile(`^(.*\S)\s+# expect (\d{3})\s*$`)
	curlRe   = regexp.MustCompile(`(?:^|[\s|(;&])curl\s+(\S+)`)
)

// walkScript turns the blocks into one bash script: strict mode, the
// demo's address, every curl failing on a non-2xx (-f) unless its line
// announces the status it gets.
func walkScript(blocks []string, rw string) (string, error) {
	script := strings.Join(blocks, "\n")
	if n := strings.Count(script, walkAddrLine); n != 1 {
		return "", fmt.Errorf("the walkthrough sets RW %d times with %q; the test replaces exactly one", n, walkAddrLine)
	}
	script = strings.Replace(script, walkAddrLine, "export RW="+rw, 1)
	lines := strings.Split(script, "\n")
	code := strings.Split(withoutComments(script), "\n")
	expects := 0
	for i, line := range lines {
		if m := expectRe.FindStringSubmatch(line); m != nil {
			if !strings.Contains(m[1], "curl ") || !strings.Contains(m[1], "%{http_code}") {
				return "", fmt.Errorf("line %q announces a status but does not print curl's %%{http_code}", line)
			}
			lines[i] = fmt.Sprintf(`got=$(%s); echo "$got"; [ "$got" = %s ] || { echo "walkthrough: expected HTTP %s, got $got" >&2; exit 1; }`,
				m[1], m[2], m[2])
			expects++
			continue
		}
		for _, m := range curlRe.FindAllStringSubmatch(code[i], -1) {
			if opt := m[1]; !strings.HasPrefix(opt, "-") || strings.HasPrefix(opt, "--") || !strings.Contains(opt, "f") {
				return "", fmt.Errorf("line %q: curl without -f (a non-2xx would pass unseen) and no '# expect NNN'", line)
			}
		}
	}
	if expects == 0 {
		return "", fmt.Errorf("the walkthrough announces no status (the stale ETag's 412 is gone?)")
	}
	return "set -euo pipefail\n" + strings.Join(lines, "\n") + "\n", nil
}

// The README's walkthrough, pasted in order into bash against a fresh demo
// on the embedded database, runs to its end: every request answers 2xx
// except those its text announces (checked to answer just that).
func TestREADMEWalkthrough(t *testing.T) {
	t.Parallel()
	var missing []string
	for _, tool := range []string{"bash", "curl", "jq", "sed", "awk", "date"} {
		if _, err := exec.LookPath(tool); err != nil {
			missing = append(missing, tool)
		}
	}
	if len(missing) > 0 {
		t.Fatalf("the README walkthrough test runs the walkthrough's commands and needs %s on PATH (missing; "+
			".ci/run installs them: apt-get install curl jq)", strings.Join(missing, ", "))
	}
	root, err := filepath.Abs("../..")
	if err != nil {
		t.Fatal(err)
	}
	readme, err := os.ReadFile(filepath.Join(root, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	blocks, err := walkBlocks(string(readme))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := walkScript(blocks, "http://127.0.0.1:1"); err != nil {
		t.Fatal(err) // before the slow part
	}

	bin := binary(t)
	home := newHome(t)
	// The smallest demo (two months: its stories need them) keeps the
	// test short; the walk only adds records of its own beside it.
	demo := exec.Command(bin, "demo", "--home", home, "--addr", "127.0.0.1:0", "--months", "2")
	stdout, err := demo.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	var stderr bytes.Buffer
	demo.Stderr = &stderr
	if err := demo.Start(); err != nil {
		t.Fatal(err)
	}
	exited := make(chan error, 1)
	go func() { exited <- demo.Wait() }()
	t.Cleanup(func() {
		// Ctrl-C, as a newcomer stops it: the embedded database stops too.
		_ = demo.Process.Signal(syscall.SIGINT)
		select {
		case <-exited:
		case <-time.After(60 * time.Second):
			_ = demo.Process.Kill()
			<-exited
			t.Error("the demo did not stop within 60 s of SIGINT")
		}
	})
	addr := make(chan string, 1)
	go func() {
		sc := bufio.NewScanner(stdout)
		for sc.Scan() {
			if a, ok := strings.CutPrefix(strings.TrimSpace(sc.Text()), "API:"); ok {
				addr <- strings.TrimSuffix(strings.TrimSpace(a), "/v1/airframes")
			}
		}
	}()
	var rw string
	select {
	case rw = <-addr:
	case err := <-exited:
		t.Fatalf("the demo ended before serving: %v\n%s", err, stderr.String())
	case <-time.After(8 * time.Minute):
		t.Fatalf("the demo did not print its address within 8 minutes\n%s", stderr.String())
	}

	script, err := walkScript(blocks, rw)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 4*time.Minute)
	defer cancel()
	// At the repository's root, where the walk finds testdata/logs; the
	// binary on PATH and the demo's home, as a newcomer who started the
	// demo in that folder has them.
	run := exec.CommandContext(ctx, "bash", "-c", script)
	run.Dir = root
	run.Env = append(os.Environ(), "PATH="+filepath.Dir(bin)+string(os.PathListSeparator)+os.Getenv("PATH"),
		"ROTORWRIGHT_HOME="+home)
	out, err := run.CombinedOutput()
	if err != nil {
		t.Fatalf("the README walkthrough failed (%v); its output:\n%s", err, out)
	}
	t.Logf("the README walkthrough's output:\n%s", out)
}

// The test's own checks: a curl without -f is refused, an announced status
// is checked, and comments do not count as commands.
func TestWalkScriptChecks(t *testing.T) {
	ok := []string{walkAddrLine + "\ncurl -fsS $RW/x   # the curl -D - comment is no command\n" +
		"curl -sS -o /dev/null -w '%{http_code}' $RW/y   # expect 412"}
	s, err := walkScript(ok, "http://h")
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(s, `[ "$got" = 412 ]`) || !strings.Contains(s, "export RW=http://h") {
		t.Errorf("script:\n%s", s)
	}
	for _, bad := range []string{
		walkAddrLine + "\ncurl -s $RW/x\ncurl -sS -w '%{http_code}' $RW/y # expect 412",
		walkAddrLine + "\nX=$(curl --silent $RW/x)\ncurl -sS -w '%{http_code}' $RW/y # expect 412",
		walkAddrLine + "\ncurl -fsS $RW/x",
		"curl -sS -w '%{http_code}' $RW/y # expect 412",
	} {
		if _, err := walkScript([]string{bad}, "http://h"); err == nil {
			t.Errorf("accepted:\n%s", bad)
		}
	}
}
