module tandem

go 1.26.8

toolchain go1.26.10

require (
	filippo.io/age v1.3.2
	github.com/BurntSushi/toml v1.6.0
	github.com/apache/arrow-go/v18 v18.9.0
	go-hep.org/x/hep v0.36.0
	golang.org/x/crypto v0.59.0
	golang.org/x/sys v0.50.0
	golang.org/x/term v0.48.0
	gonum.org/v1/gonum v0.17.0
)

// Test-only dependencies: go-cmp for structural diffs, testscript for the
// CLI workflow scripts.
require (
	github.com/google/go-cmp v0.7.0
	github.com/rogpeppe/go-internal v1.16.0
)

require (
	filippo.io/edwards25519 v1.2.0 // indirect
	filippo.io/hpke v0.4.0 // indirect
	github.com/andybalholm/brotli v1.2.8 // indirect
	github.com/apache/thrift v0.25.0 // indirect
	github.com/cespare/xxhash/v2 v2.3.0 // indirect
	github.com/go-mmap/mmap v0.7.0 // indirect
	github.com/goccy/go-json v0.12.0 // indirect
	github.com/gonuts/binary v0.2.0 // indirect
	github.com/google/flatbuffers v25.12.19+incompatible // indirect
	github.com/google/uuid v1.6.0 // indirect
	github.com/hashicorp/go-uuid v1.0.3 // indirect
	github.com/klauspost/compress v1.20.3 // indirect
	github.com/klauspost/cpuid/v2 v2.4.2 // indirect
	github.com/pierrec/lz4/v4 v4.1.33 // indirect
	github.com/pierrec/xxHash v0.1.5 // indirect
	github.com/ulikunitz/xz v0.5.15 // indirect
	github.com/zeebo/xxh3 v1.1.0 // indirect
	golang.org/x/exp v0.0.0-20260112195511-716be5621a96 // indirect
	golang.org/x/mod v0.42.0 // indirect
	golang.org/x/sync v0.25.0 // indirect
	golang.org/x/text v0.44.0 // indirect
	golang.org/x/tools v0.52.0 // indirect
	gopkg.in/yaml.v3 v3.0.1 // indirect
)
