// Package safefs reads and writes files beneath one directory, the campaign
// root, and never follows a symbolic link while doing so.
//
// A [Root] is opened once with [Open]; every other path is relative to it,
// written with forward slashes ("sealed/heron/flux.age"). A relative path is
// accepted only if it is "." (the root itself) or a sequence of components
// c₁/c₂/…/cₙ where no cᵢ is empty, ".", or "..", none contains a backslash
// or a NUL byte, and the path does not start with "/". Anything else is
// refused before the file system is touched: ".." and absolute paths with
// [ErrEscape], the rest with [ErrInvalidPath].
//
// # Resolution
//
// On Linux each path is opened with openat2(2) relative to a descriptor of
// the root, with
//
//	resolve = RESOLVE_BENEATH | RESOLVE_NO_SYMLINKS | RESOLVE_NO_MAGICLINKS
//
// so the kernel itself refuses a path that leaves the root or meets a
// symbolic link at any component, the last one included, in one atomic
// lookup. Where openat2 is missing (ENOSYS on kernels before 5.6, or EPERM
// from a seccomp filter) and on the other Unix systems, the path is walked
// one component at a time from the root descriptor: every directory is
// opened with openat(dirfd, cᵢ, O_DIRECTORY|O_NOFOLLOW) and the last
// component with O_NOFOLLOW, so a component swapped for a symbolic link
// between two calls is still refused rather than followed. Operations on a
// name (rename, unlink, mkdir, lstat) run on a descriptor of the parent
// directory with the *at system calls, which do not follow the last
// component. On Windows and other systems the package uses [os.Root] and
// checks every component with Lstat first; that check is best effort, as a
// component can be swapped between the check and the use.
//
// The root itself must be a real directory, not a symbolic link; symbolic
// links in the path above it are the user's business.
//
// # Errors
//
// Every error is an [*Error] naming the relative path. Its kind is one of
// the sentinels [ErrSymlink], [ErrEscape], [ErrTooLarge], [ErrInvalidPath]
// and [ErrNotRegular], usable with [errors.Is]; file-system causes are kept
// too, so errors.Is(err, fs.ErrNotExist) works as usual.
//
// # Crash safety
//
// [Root.WriteAtomic] writes a temporary file named TempPrefix+name+"-"+random
// in the target's directory, syncs it, renames it over the target and syncs
// the directory: after a crash the target holds the old content or the new,
// never a mixture. A crash between creating and renaming leaves the
// temporary file behind; [Root.Leftovers] lists such files so that the next
// step can explain and remove them. [Root.CreateExclusive] writes the same
// way and links the temporary file to the target name, which fails if the
// name exists, so the new file appears whole or not at all. A [Batch]
// creates many files unsynced and makes them durable together with
// [Batch.Sync]; until Sync returns, a crash may leave any of them missing
// or short, so nothing may record them before that.
package safefs
