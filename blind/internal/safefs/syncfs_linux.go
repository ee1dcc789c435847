package safefs

import "golang.org/x/sys/unix"

// syncFS flushes the file system that holds fd.
func syncFS(fd int) error {
	for {
		err := unix.Syncfs(fd)
		if err != unix.EINTR {
			return err
		}
	}
}
