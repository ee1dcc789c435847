package campaign

// SetCrashHook lets the crash tests stop a child process at a chosen point.
func SetCrashHook(f func(string)) { crashHook = f }
