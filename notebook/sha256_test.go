package notebook

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"testing"
)

// Digests of saved results must not change when the hash is written out by
// hand: compare with crypto/sha256 on the published vectors of FIPS 180-4
// (examples "abc" and the 448-bit message) and on lengths around every
// padding boundary, written whole and in pieces.
func TestSHA256(t *testing.T) {
	tests := []struct{ in, want string }{
		{"abc", "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"},                                                      // FIPS 180-4 example
		{"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq", "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"}, // FIPS 180-4 example
		{"", "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"},
	}
	for _, tt := range tests {
		s := sha256Sum([]byte(tt.in))
		if got := hex.EncodeToString(s[:]); got != tt.want {
			t.Errorf("sha256(%q) = %s, want %s", tt.in, got, tt.want)
		}
	}
	for n := range 300 {
		p := bytes.Repeat([]byte{byte(n), 'x', 0xff}, n)[:n+n/2]
		want := sha256.Sum256(p)
		if got := sha256Sum(p); got != want {
			t.Fatalf("length %d: %x, crypto/sha256 %x", len(p), got, want)
		}
		d := newSHA256()
		for i := 0; i < len(p); i += 1 + n%7 {
			_, _ = d.Write(p[i:min(len(p), i+1+n%7)])
		}
		mid := d.Sum(nil) // Sum must not disturb the running state
		if got := d.Sum(nil); !bytes.Equal(got, want[:]) || !bytes.Equal(mid, want[:]) {
			t.Fatalf("length %d in pieces: %x, crypto/sha256 %x", len(p), got, want)
		}
	}
	d := newSHA256()
	fmt.Fprintf(d, "gapbook-cell-1\n%q\n", "mesh")
	if got, want := d.Sum(nil), sha256.Sum256([]byte("gapbook-cell-1\n\"mesh\"\n")); !bytes.Equal(got, want[:]) {
		t.Errorf("through fmt.Fprintf: %x, want %x", got, want)
	}
}
