package main

import (
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"fmt"
	"io"
	"math/big"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// writeResolveConfig writes a configuration with the given extra top-level YAML.
func writeResolveConfig(t *testing.T, extra string) string {
	t.Helper()
	dir := t.TempDir()
	port := filepath.Join(dir, "ttyFAKE") // a file standing in for the port: nothing opens it here
	if err := os.WriteFile(port, nil, 0o600); err != nil {
		t.Fatal(err)
	}
	yaml := "data_dir: /srv/from-file\nlisten: \":9911\"\n" + extra +
		"loggers:\n  - name: a\n    port: " + port + "\n    line:\n      columns:\n        - {index: 1, channel: c1}\n" +
		"channels:\n  - name: c1\n"
	path := filepath.Join(dir, "settle.yaml")
	if err := os.WriteFile(path, []byte(yaml), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestCLIResolution: each of data directory, address and token comes from the flag,
// else the SETTLE_ variable, else the configuration file (--config, else SETTLE_CONFIG,
// else the default path).
func TestCLIResolution(t *testing.T) {
	withToken := writeResolveConfig(t, "http:\n  token: from-file\n")
	pems := t.TempDir() // files that exist (the client only reads the certificate, if it can)
	for _, n := range []string{"cert.pem", "key.pem"} {
		if err := os.WriteFile(filepath.Join(pems, n), nil, 0o600); err != nil {
			t.Fatal(err)
		}
	}
	withTLS := writeResolveConfig(t, "http:\n  token: t\n  tls_cert: "+filepath.Join(pems, "cert.pem")+"\n  tls_key: "+filepath.Join(pems, "key.pem")+"\n")
	broken := filepath.Join(t.TempDir(), "broken.yaml")
	if err := os.WriteFile(broken, []byte("listen: [\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name                  string
		flags                 cliFlags
		env                   map[string]string
		defaultPath           string
		dir, url, token, fail string
	}{
		{name: "file via --config", flags: cliFlags{config: withToken},
			dir: "/srv/from-file", url: "http://127.0.0.1:9911", token: "from-file"},
		{name: "file via SETTLE_CONFIG", env: map[string]string{envConfig: withToken},
			dir: "/srv/from-file", url: "http://127.0.0.1:9911", token: "from-file"},
		{name: "file at the default path", defaultPath: withToken,
			dir: "/srv/from-file", url: "http://127.0.0.1:9911", token: "from-file"},
		{name: "variables over the file", flags: cliFlags{config: withToken},
			env: map[string]string{"SETTLE_DATA_DIR": "/srv/env", "SETTLE_LISTEN": "10.0.0.5:8000", "SETTLE_TOKEN": "from-env"},
			dir: "/srv/env", url: "http://10.0.0.5:8000", token: "from-env"},
		{name: "flags over variables", flags: cliFlags{config: withToken, dataDir: "/srv/flag", addr: "[::]:7000", token: "from-flag"},
			env: map[string]string{"SETTLE_DATA_DIR": "/srv/env", "SETTLE_LISTEN": "10.0.0.5:8000", "SETTLE_TOKEN": "from-env"},
			dir: "/srv/flag", url: "http://[::1]:7000", token: "from-flag"},
		{name: "TLS in the file", flags: cliFlags{config: withTLS},
			dir: "/srv/from-file", url: "https://127.0.0.1:9911", token: "t"},
		{name: "a broken default file left aside when flags say enough", defaultPath: broken,
			flags: cliFlags{dataDir: "/srv/flag", token: "x"}, dir: "/srv/flag", url: "http://" + defaultListen, token: "x"},
		{name: "a broken default file reported when nothing else says", defaultPath: broken,
			fail: "(read by default; give --config FILE to name another)"},
		{name: "a broken file named by --config", flags: cliFlags{config: broken, dataDir: "/srv/flag"}, fail: broken},
		{name: "nothing at all", fail: "no data directory: give --config FILE"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			cliEnv(t)
			for k, v := range tc.env {
				t.Setenv(k, v)
			}
			if tc.defaultPath != "" {
				defaultConfigPath = tc.defaultPath
			}
			f := tc.flags
			c, err := f.loadConfig()
			var dir string
			var tgt daemonTarget
			if err == nil {
				dir, _, err = f.resolveDataDir(c)
			}
			if err == nil {
				tgt, err = f.daemon(c)
			}
			if tc.fail != "" {
				if err == nil || !strings.Contains(err.Error(), tc.fail) {
					t.Fatalf("err %v, want one containing %q", err, tc.fail)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if dir != tc.dir || tgt.url != tc.url || tgt.token != tc.token {
				t.Errorf("data dir %q, url %q, token %q; want %q, %q, %q", dir, tgt.url, tgt.token, tc.dir, tc.url, tc.token)
			}
		})
	}
}

// TestClientTLSPinsTheDaemonsCertificate: run-start and run-stop dial 127.0.0.1 for a
// listen address with no host, while a lab's certificate names the PC (here: a
// self-signed certificate with no names at all), so host-name verification alone
// would refuse the daemon. The client trusts exactly the daemon's own certificate
// file; a server with any other self-signed certificate is still refused.
func TestClientTLSPinsTheDaemonsCertificate(t *testing.T) {
	daemonCert, daemonKey := selfSigned(t, t.TempDir())
	otherCert, otherKey := selfSigned(t, t.TempDir())
	serve := func(certFile, keyFile string) string {
		pair, err := tls.LoadX509KeyPair(certFile, keyFile)
		if err != nil {
			t.Fatal(err)
		}
		srv := httptest.NewUnstartedServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			io.WriteString(w, "ok")
		}))
		srv.TLS = &tls.Config{Certificates: []tls.Certificate{pair}}
		srv.StartTLS()
		t.Cleanup(srv.Close)
		return srv.URL // https://127.0.0.1:port
	}
	get := func(url string) error {
		hc := &http.Client{Timeout: 10 * time.Second, Transport: &http.Transport{TLSClientConfig: clientTLS(daemonCert, "127.0.0.1")}}
		resp, err := hc.Get(url)
		if err != nil {
			return err
		}
		defer resp.Body.Close()
		if b, _ := io.ReadAll(resp.Body); string(b) != "ok" {
			return fmt.Errorf("body %q", b)
		}
		return nil
	}
	if err := get(serve(daemonCert, daemonKey)); err != nil {
		t.Errorf("the daemon's own certificate at 127.0.0.1: %v", err)
	}
	other := serve(otherCert, otherKey)
	if err := get(other); err == nil || !strings.Contains(err.Error(), "certificate") {
		t.Errorf("another self-signed certificate: err %v, want a certificate error", err)
	}
	c := &daemonClient{addr: other, token: "t", http: &http.Client{Timeout: 10 * time.Second,
		Transport: &http.Transport{TLSClientConfig: clientTLS(daemonCert, "127.0.0.1")}}}
	err := c.call(context.Background(), http.MethodGet, "/api/v1/runs", nil, nil)
	if err == nil || !strings.Contains(err.Error(), "the daemon's certificate was not accepted") {
		t.Errorf("runs API behind another certificate: err %v, want the certificate hint", err)
	}
}

// TestVerifyDaemonExpired: the pinned certificate outside its validity period is
// refused with the dates and what to renew.
func TestVerifyDaemonExpired(t *testing.T) {
	certFile, _ := selfSigned(t, t.TempDir())
	pinned := readCerts(certFile)
	if len(pinned) != 1 {
		t.Fatalf("read %d certificates from %s, want 1", len(pinned), certFile)
	}
	cs := tls.ConnectionState{PeerCertificates: pinned, ServerName: "127.0.0.1"}
	if err := verifyDaemon(cs, pinned, x509.NewCertPool(), "127.0.0.1", time.Now()); err != nil {
		t.Errorf("within its validity: %v", err)
	}
	err := verifyDaemon(cs, pinned, x509.NewCertPool(), "127.0.0.1", time.Now().Add(48*time.Hour))
	if err == nil || !strings.Contains(err.Error(), "renew http.tls_cert") {
		t.Errorf("two days later: err %v, want the validity period and a hint", err)
	}
	if err := verifyDaemon(tls.ConnectionState{}, pinned, x509.NewCertPool(), "127.0.0.1", time.Now()); err == nil {
		t.Error("no certificate at all was accepted")
	}
}

// TestVerifyDaemonChecksTheDialledHost: a certificate other than the daemon's own must
// be valid for the host dialled — also an IP address, for which Go sends no server
// name, so the connection's ServerName is empty and cannot be what is checked. A
// certificate for another name under a trusted root is refused; one for the dialled
// name is accepted. Our own throwaway root and leaves.
func TestVerifyDaemonChecksTheDialledHost(t *testing.T) {
	rootKey, _ := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	rootTmpl := &x509.Certificate{SerialNumber: big.NewInt(1), Subject: pkix.Name{CommonName: "lab root"},
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour), IsCA: true,
		BasicConstraintsValid: true, KeyUsage: x509.KeyUsageCertSign}
	rootDER, err := x509.CreateCertificate(rand.Reader, rootTmpl, rootTmpl, &rootKey.PublicKey, rootKey)
	if err != nil {
		t.Fatal(err)
	}
	root, _ := x509.ParseCertificate(rootDER)
	leaf := func(dns string) *x509.Certificate {
		k, _ := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
		tmpl := &x509.Certificate{SerialNumber: big.NewInt(2), Subject: pkix.Name{CommonName: dns}, DNSNames: []string{dns},
			NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
			ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth}}
		der, err := x509.CreateCertificate(rand.Reader, tmpl, root, &k.PublicKey, rootKey)
		if err != nil {
			t.Fatal(err)
		}
		c, _ := x509.ParseCertificate(der)
		return c
	}
	roots := x509.NewCertPool()
	roots.AddCert(root)
	pinned := readCerts(func() string { p, _ := selfSigned(t, t.TempDir()); return p }())
	evil := tls.ConnectionState{PeerCertificates: []*x509.Certificate{leaf("evil.example")}} // no ServerName: an IP was dialled
	if err := verifyDaemon(evil, pinned, roots, "10.0.0.5", time.Now()); err == nil {
		t.Error("a certificate for evil.example was accepted for 10.0.0.5")
	}
	good := tls.ConnectionState{PeerCertificates: []*x509.Certificate{leaf("bench-pc.lab")}, ServerName: "bench-pc.lab"}
	if err := verifyDaemon(good, pinned, roots, "bench-pc.lab", time.Now()); err != nil {
		t.Errorf("a certificate for the dialled bench-pc.lab under a trusted root: %v", err)
	}
}
