package protocol

import (
	"crypto/ed25519"
	"crypto/rand"
	"fmt"
	"strings"
	"testing"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"
)

var benchN = 500

// BenchmarkParse reads a protocol of 500 observables.
//
//	go test ./blind/protocol -run '^$' -bench Parse
func BenchmarkParse(b *testing.B) {
	key := func() string {
		pub, _, _ := ed25519.GenerateKey(rand.Reader)
		k, _ := ssh.NewPublicKey(pub)
		return strings.TrimSpace(string(ssh.MarshalAuthorizedKey(k)))
	}
	id, _ := age.GenerateX25519Identity()
	var sb strings.Builder
	fmt.Fprintf(&sb, "format = \"tandem/v2\"\ncampaign = \"bench\"\ncustodian = %q\ncustodian_key = %q\nquorum = [\"a\", \"b\"]\n", id.Recipient().String(), key())
	for _, p := range []string{"a", "b"} {
		fmt.Fprintf(&sb, "[[party]]\nname = %q\nrole = \"team\"\nkey = %q\n", p, key())
	}
	for i := 0; i < benchN; i++ {
		fmt.Fprintf(&sb, "[[observable]]\nname = \"obs%03d\"\n  [[observable.column]]\n  name = \"counts\"\n  errors = [\"stat\"]\n  scale = [0.5, 2.0]\n  shift = [-2000.0, 2000.0]\n  correlation = 0.5\n", i)
	}
	data := []byte(sb.String())
	for b.Loop() {
		if _, err := Parse("campaign.toml", data); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkParse50(b *testing.B) {
	benchN = 50
	defer func() { benchN = 500 }()
	BenchmarkParse(b)
}
