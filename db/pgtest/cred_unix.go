//go:build !windows

package pgtest

import (
	"fmt"
	"os"
	"os/exec"
	"os/user"
	"strconv"
	"syscall"
)

type credential *syscall.Credential

// dropRoot makes the server run as nobody when the test runs as root
// (PostgreSQL refuses to run as root) and gives it the cluster's folder.
func (c *Cluster) dropRoot() error {
	if os.Geteuid() != 0 {
		return nil
	}
	u, err := user.Lookup("nobody")
	if err != nil {
		return fmt.Errorf("running as root needs the user nobody: %w", err)
	}
	uid, _ := strconv.Atoi(u.Uid)
	gid, _ := strconv.Atoi(u.Gid)
	c.cred = &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)}
	if err := os.Chmod(c.dir, 0o755); err != nil {
		return err
	}
	return os.Chown(c.dir, uid, gid)
}

func applyCred(cred credential, cmd *exec.Cmd) {
	if cred != nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: cred}
	}
}
