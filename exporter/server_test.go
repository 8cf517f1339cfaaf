package exporter

import (
	"bufio"
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/json"
	"encoding/pem"
	"math/big"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// serve runs srv on a loopback port until the test ends and returns the address.
func serve(t *testing.T, srv *Server) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- srv.Serve(ln) }()
	t.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		if err := srv.Shutdown(ctx); err != nil {
			t.Errorf("Shutdown: %v", err)
		}
		if err := <-done; err != nil {
			t.Errorf("Serve: %v", err)
		}
	})
	return ln.Addr().String()
}

func TestSlowHeaderClientIsCutOff(t *testing.T) {
	h := newTestHandler(curveState(), Options{})
	addr := serve(t, NewServer(h, ServerOptions{ReadHeaderTimeout: 200 * time.Millisecond}))
	conn, err := net.Dial("tcp", addr)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	// Half a request line, then nothing: the server must close the connection.
	if _, err := conn.Write([]byte("GET /api/v1/chan")); err != nil {
		t.Fatal(err)
	}
	_ = conn.SetReadDeadline(time.Now().Add(10 * time.Second)) // hang guard only
	buf := make([]byte, 512)
	n, err := conn.Read(buf)
	for err == nil {
		var m int
		m, err = conn.Read(buf[n:])
		n += m
	}
	if ne, ok := err.(net.Error); ok && ne.Timeout() {
		t.Fatal("the server kept a slow client's connection open")
	}
	if ans := string(buf[:n]); n > 0 && !strings.HasPrefix(ans, "HTTP/1.1 400") && !strings.HasPrefix(ans, "HTTP/1.1 408") {
		t.Errorf("answer to a slow client: %q, want 400/408 or a closed connection", ans)
	}
	// The server still answers others.
	resp, err := http.Get("http://" + addr + "/healthz")
	if err != nil || resp.StatusCode != 200 {
		t.Fatalf("healthz after a slow client: %v %v", resp, err)
	}
	resp.Body.Close()
}

func TestOversizedHeadersRefused(t *testing.T) {
	addr := serve(t, NewServer(newTestHandler(curveState(), Options{}), ServerOptions{}))
	req, _ := http.NewRequest("GET", "http://"+addr+"/healthz", nil)
	req.Header.Set("X-Junk", strings.Repeat("j", 64<<10))
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != http.StatusRequestHeaderFieldsTooLarge {
		t.Errorf("64 KiB header: %d, want 431", resp.StatusCode)
	}
}

// selfSigned writes a fresh self-signed certificate for 127.0.0.1 and its key.
func selfSigned(t *testing.T) (certFile, keyFile string, pool *x509.CertPool) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tmpl := &x509.Certificate{
		SerialNumber: big.NewInt(1), Subject: pkix.Name{CommonName: "settle test"},
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
		IPAddresses: []net.IP{net.ParseIP("127.0.0.1")},
		KeyUsage:    x509.KeyUsageDigitalSignature, ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth},
	}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	keyDER, err := x509.MarshalECPrivateKey(key)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	certFile, keyFile = filepath.Join(dir, "cert.pem"), filepath.Join(dir, "key.pem")
	if err := os.WriteFile(certFile, pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der}), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(keyFile, pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: keyDER}), 0o600); err != nil {
		t.Fatal(err)
	}
	cert, _ := x509.ParseCertificate(der)
	pool = x509.NewCertPool()
	pool.AddCert(cert)
	return certFile, keyFile, pool
}

func TestTLS(t *testing.T) {
	certFile, keyFile, pool := selfSigned(t)
	srv := NewServer(newTestHandler(curveState(), Options{}), ServerOptions{TLSCert: certFile, TLSKey: keyFile})
	if !srv.TLS() {
		t.Fatal("TLS() = false with both files set")
	}
	addr := serve(t, srv)
	client := &http.Client{Transport: &http.Transport{TLSClientConfig: &tls.Config{RootCAs: pool}}}
	resp, err := client.Get("https://" + addr + "/api/v1/channels")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var body ChannelsResponse
	if err := json.NewDecoder(resp.Body).Decode(&body); err != nil || len(body.Channels) != 2 || resp.TLS == nil {
		t.Fatalf("HTTPS channels: %v, %d channels, tls %v", err, len(body.Channels), resp.TLS != nil)
	}
	// Plain HTTP to the TLS port gets no API answer.
	plain, err := http.Get("http://" + addr + "/api/v1/channels")
	if err == nil {
		defer plain.Body.Close()
		if plain.StatusCode == 200 {
			t.Error("plain HTTP was served on the TLS port")
		}
	}
}

func TestTLSBadFilesNamed(t *testing.T) {
	srv := NewServer(newTestHandler(curveState(), Options{}), ServerOptions{TLSCert: "/nonexistent/cert.pem", TLSKey: "/nonexistent/key.pem"})
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	err = srv.Serve(ln)
	if err == nil || !strings.Contains(err.Error(), "/nonexistent/cert.pem") || !strings.Contains(err.Error(), "http.tls_cert") {
		t.Errorf("Serve with missing files: %v, want an error naming the file and the config key", err)
	}
	_ = srv.Shutdown(context.Background())
}

func TestManyStreamsRefused(t *testing.T) {
	addr := serve(t, NewServer(newTestHandler(curveState(), Options{MaxStreams: 1}), ServerOptions{}))
	first, err := http.Get("http://" + addr + "/api/v1/events")
	if err != nil {
		t.Fatal(err)
	}
	defer first.Body.Close()
	if line, _ := bufio.NewReader(first.Body).ReadString('\n'); line != "event: channels\n" {
		t.Fatalf("first stream starts %q", line)
	}
	second, err := http.Get("http://" + addr + "/api/v1/events")
	if err != nil {
		t.Fatal(err)
	}
	second.Body.Close()
	if second.StatusCode != http.StatusServiceUnavailable {
		t.Errorf("second stream over the cap: %d, want 503", second.StatusCode)
	}
}
