package pglocal

import (
	"fmt"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"strconv"
	"syscall"
)

// account is the operating-system user the server programs run as. PostgreSQL
// refuses to run as root, so a root process runs them as "postgres".
type account struct {
	name     string
	uid, gid int
	cred     *syscall.Credential // nil: run as the current user
}

// serverAccount picks the account for initdb, pg_ctl and postgres.
func serverAccount() (account, error) {
	if os.Geteuid() != 0 {
		return account{uid: os.Geteuid(), gid: os.Getegid()}, nil
	}
	u, err := user.Lookup("postgres")
	if err != nil {
		return account{}, fmt.Errorf("pglocal: running as root, and PostgreSQL refuses to run as root, "+
			"but there is no \"postgres\" system user to run it as (%v): create one "+
			"(useradd --system --home-dir /var/lib/postgresql postgres), run as an ordinary user, "+
			"or set DATABASE_URL to an existing server", err)
	}
	uid, err1 := strconv.Atoi(u.Uid)
	gid, err2 := strconv.Atoi(u.Gid)
	if err1 != nil || err2 != nil {
		return account{}, fmt.Errorf("pglocal: user postgres has non-numeric uid %q / gid %q", u.Uid, u.Gid)
	}
	return account{
		name: "postgres",
		uid:  uid,
		gid:  gid,
		cred: &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)},
	}, nil
}

// switched reports whether the programs run as another user than ours.
func (a account) switched() bool { return a.cred != nil }

// apply makes cmd run as the account.
func (a account) apply(cmd *exec.Cmd) {
	if a.cred != nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: a.cred}
	}
}

// own hands path to the account, so the server can write files we created.
func (a account) own(path string) error {
	if a.cred == nil {
		return nil
	}
	return os.Chown(path, a.uid, a.gid)
}

// checkReachable fails when the account cannot enter every directory from /
// down to dir; without this the server dies later with a bare "permission
// denied". t.TempDir() parents (mode 0700, owned by root) are the usual case.
func (a account) checkReachable(dir string) error {
	if a.cred == nil {
		return nil
	}
	for p := dir; ; p = filepath.Dir(p) {
		fi, err := os.Stat(p)
		if err != nil {
			return fmt.Errorf("pglocal: %w", err)
		}
		st, ok := fi.Sys().(*syscall.Stat_t)
		if ok && !canEnter(fi.Mode().Perm(), int(st.Uid), int(st.Gid), a.uid, a.gid) {
			return fmt.Errorf("pglocal: the server runs as user %s, which cannot enter %s (mode %04o, owner uid %d): "+
				"put the data folder under a directory others may enter (e.g. /var/lib/rotorwright) or run chmod o+x on it",
				a.name, p, fi.Mode().Perm(), st.Uid)
		}
		if p == filepath.Dir(p) {
			return nil
		}
	}
}

// canEnter applies the owner/group/other execute bits; supplementary groups
// are ignored, which can only make the check stricter.
func canEnter(perm os.FileMode, ownerUID, ownerGID, uid, gid int) bool {
	switch {
	case ownerUID == uid:
		return perm&0o100 != 0
	case ownerGID == gid:
		return perm&0o010 != 0
	default:
		return perm&0o001 != 0
	}
}
