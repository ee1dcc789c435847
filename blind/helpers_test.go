package blind_test

import (
	"fmt"
	"time"
)

func sprintf(f string, a ...any) string { return fmt.Sprintf(f, a...) }

func nowForTest() time.Time { return time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC) }
