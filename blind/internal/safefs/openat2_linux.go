package safefs

import (
	"sync"

	"golang.org/x/sys/unix"
)

// resolveFlags: the kernel refuses to leave the root and to follow any
// symbolic link, the last component included.
const resolveFlags = unix.RESOLVE_BENEATH | unix.RESOLVE_NO_SYMLINKS | unix.RESOLVE_NO_MAGICLINKS

var (
	probeOnce sync.Once
	probeOK   bool
)

// haveOpenat2 tells, once per process, whether openat2(2) works: kernels
// before 5.6 answer ENOSYS, and some container sandboxes EPERM.
func haveOpenat2(dfd int) bool {
	probeOnce.Do(func() {
		fd, err := openat2(dfd, ".", unix.O_RDONLY|unix.O_DIRECTORY|unix.O_CLOEXEC, 0)
		if err == nil {
			unix.Close(fd)
		}
		probeOK = err != unix.ENOSYS && err != unix.EPERM
	})
	return probeOK
}

// openat2 opens rel beneath dfd with [resolveFlags]. EAGAIN, which the
// kernel returns when a rename raced the lookup, is retried a few times.
func openat2(dfd int, rel string, flags int, perm uint32) (int, error) {
	how := unix.OpenHow{Flags: uint64(flags | unix.O_CLOEXEC), Resolve: resolveFlags}
	if flags&unix.O_CREAT != 0 {
		how.Mode = uint64(perm)
	}
	var fd int
	var err error
	for range 16 {
		fd, err = unix.Openat2(dfd, rel, &how)
		if err != unix.EINTR && err != unix.EAGAIN {
			break
		}
	}
	return fd, err
}
