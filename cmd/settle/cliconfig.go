package main

import (
	"crypto/tls"
	"crypto/x509"
	"encoding/pem"
	"errors"
	"fmt"
	"io/fs"
	"net"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq/journal"
)

// envConfig names the configuration file for the commands that read the record or
// talk to the daemon, when --config is not given.
const envConfig = "SETTLE_CONFIG"

// defaultConfigPath is the service's configuration (deploy/systemd/settle.service runs
// `settle run --config /etc/settle/settle.yaml`); the record and daemon commands read it
// when neither --config nor SETTLE_CONFIG names a file and it exists. A variable so
// that tests can point it elsewhere.
var defaultConfigPath = "/etc/settle/settle.yaml"

// cliFlags are the flags shared by the commands that read the record (runs, report,
// export) or talk to the running daemon (run-start, run-stop). Each value comes from,
// in order: the flag, the SETTLE_ environment variable, the configuration file.
type cliFlags struct {
	config, dataDir, addr, token string
}

// addConfigFlag adds --config.
func (f *cliFlags) addConfigFlag(cmd *cobra.Command) {
	cmd.Flags().StringVar(&f.config, "config", "", "the daemon's configuration file (default $"+envConfig+", else "+defaultConfigPath+" if it exists)")
}

// addRecordFlags adds --config and --data-dir.
func (f *cliFlags) addRecordFlags(cmd *cobra.Command) {
	f.addConfigFlag(cmd)
	cmd.Flags().StringVar(&f.dataDir, "data-dir", "", "the daemon's data directory (default $"+config.EnvDataDir+", else data_dir in the configuration)")
}

// addDaemonFlags adds --config, --addr and --token.
func (f *cliFlags) addDaemonFlags(cmd *cobra.Command) {
	f.addConfigFlag(cmd)
	cmd.Flags().StringVar(&f.addr, "addr", "", "the daemon's HTTP address (default $"+config.EnvListen+", else listen in the configuration, else "+defaultListen+")")
	cmd.Flags().StringVar(&f.token, "token", "", "the daemon's API token (default $"+config.EnvToken+", else http.token in the configuration)")
}

// cliConfig is the configuration a command found: path is empty and cfg nil when there
// is none. The SETTLE_ variables are already applied to cfg (config.Load does).
type cliConfig struct {
	path string
	cfg  *config.Config
	// skipped is why the default file, found but not loaded, was left aside; it is
	// reported only when nothing else names what the command needs.
	skipped error
}

// loadConfig finds and loads the configuration: --config, then SETTLE_CONFIG, then
// defaultConfigPath when it exists. A file named but unreadable or invalid is an error.
func (f *cliFlags) loadConfig() (cliConfig, error) {
	path := f.config
	if path == "" {
		path = os.Getenv(envConfig)
	}
	if path == "" {
		if _, err := os.Stat(defaultConfigPath); err != nil {
			return cliConfig{}, nil
		}
		cfg, err := config.Load(defaultConfigPath)
		if err != nil { // unreadable by this user, say: flags may still say enough
			return cliConfig{skipped: fmt.Errorf("%w (read by default; give --config FILE to name another)", err)}, nil
		}
		return cliConfig{path: defaultConfigPath, cfg: cfg}, nil
	}
	cfg, err := config.Load(path)
	if err != nil {
		return cliConfig{}, err
	}
	return cliConfig{path: path, cfg: cfg}, nil
}

// errNoDataDir says how to name the data directory when nothing did.
var errNoDataDir = errors.New("no data directory: give --config FILE (the daemon's configuration; its data_dir is used), " +
	"or --data-dir DIR, or set " + envConfig + " or " + config.EnvDataDir)

// resolveDataDir resolves the data directory and says where it came from.
func (f *cliFlags) resolveDataDir(c cliConfig) (dir, from string, err error) {
	switch {
	case f.dataDir != "":
		return f.dataDir, "--data-dir", nil
	case os.Getenv(config.EnvDataDir) != "":
		return os.Getenv(config.EnvDataDir), config.EnvDataDir, nil
	case c.cfg != nil:
		return c.cfg.DataDir, "data_dir in " + c.path, nil
	case c.skipped != nil:
		return "", "", c.skipped
	}
	return "", "", errNoDataDir
}

// openRecord loads the configuration and opens the journal of its data directory
// read-only (safe while the daemon writes it). A missing journal is an error that
// names the folder, where it came from and what to do.
func (f *cliFlags) openRecord() (*journal.Journal, cliConfig, error) {
	c, err := f.loadConfig()
	if err != nil {
		return nil, c, err
	}
	dir, from, err := f.resolveDataDir(c)
	if err != nil {
		return nil, c, err
	}
	j, err := journal.Open(dir, journal.Options{ReadOnly: true})
	if errors.Is(err, fs.ErrNotExist) {
		abs, _ := filepath.Abs(dir)
		hint := ""
		if !filepath.IsAbs(dir) {
			hint = " (a relative data_dir is relative to the daemon's working directory; give the daemon an absolute data_dir)"
		}
		return nil, c, fmt.Errorf("no record in %s (the data directory from %s): no %s there; "+
			"the daemon creates it when it starts, so start it first, or name the data directory it uses%s", abs, from, journal.FileName, hint)
	}
	return j, c, err
}

// daemonTarget is where the daemon listens and the token to use.
type daemonTarget struct {
	url, token string
	tls        *tls.Config // nil for plain HTTP
}

// daemon resolves the daemon's address and token. Without a token it says what to
// configure: the daemon refuses run changes until http.token is set.
func (f *cliFlags) daemon(c cliConfig) (daemonTarget, error) {
	addr := f.addr
	if addr == "" {
		addr = os.Getenv(config.EnvListen)
	}
	if addr == "" && c.cfg != nil {
		addr = c.cfg.Listen
	}
	if addr == "" {
		addr = defaultListen
	}
	var t daemonTarget
	secure := c.cfg != nil && c.cfg.HTTP.TLSCert != "" && c.cfg.HTTP.TLSKey != ""
	u, err := daemonURL(addr, secure)
	if err != nil {
		return t, err
	}
	t.url = u
	if secure && strings.HasPrefix(u, "https://") {
		t.tls = clientTLS(c.cfg.HTTP.TLSCert, urlHost(u))
	}
	t.token = f.token
	if t.token == "" {
		t.token = os.Getenv(config.EnvToken)
	}
	if t.token == "" && c.cfg != nil {
		t.token = c.cfg.HTTP.Token
	}
	if t.token != "" {
		return t, nil
	}
	if c.skipped != nil {
		return t, c.skipped
	}
	if c.cfg != nil {
		return t, fmt.Errorf("no API token: the daemon needs http.token set in %s (or %s in the daemon's environment) "+
			"before runs can be started or stopped; set it and reload the daemon (systemctl reload settle, or SIGHUP), "+
			"then run this again (or give --token, or set %s here)", c.path, config.EnvToken, config.EnvToken)
	}
	return t, fmt.Errorf("no API token: give --config FILE (the daemon's configuration; its http.token is used), --token TOKEN, "+
		"or set %s or %s; the daemon refuses run changes until http.token is set in its configuration", envConfig, config.EnvToken)
}

// daemonURL turns a listen address into the URL a client dials: an unspecified host
// (":8391", "0.0.0.0:8391", "[::]:8391") means this machine's loopback.
func daemonURL(addr string, secure bool) (string, error) {
	if strings.Contains(addr, "://") {
		return strings.TrimRight(addr, "/"), nil
	}
	host, port, err := net.SplitHostPort(addr)
	if err != nil {
		return "", fmt.Errorf("daemon address %q: want HOST:PORT such as %s: %w", addr, defaultListen, err)
	}
	switch host {
	case "", "0.0.0.0":
		host = "127.0.0.1"
	case "::":
		host = "::1"
	}
	scheme := "http"
	if secure {
		scheme = "https"
	}
	return scheme + "://" + net.JoinHostPort(host, port), nil
}

// clientTLS trusts the daemon's own certificate (a self-signed one is common on a lab
// PC) besides the system's roots; an unreadable file leaves the system's roots.
//
// The daemon's own certificate is pinned: a server presenting exactly that certificate
// (within its validity period) is the daemon, whatever address was dialled, so a
// certificate naming only the host ("bench-pc.lab") still works when the client dials
// 127.0.0.1 for a listen address of ":8391". Any other certificate goes through the
// usual chain and host-name verification against the system's roots. crypto/tls has
// no setting for this, hence VerifyConnection.
func clientTLS(certFile, host string) *tls.Config {
	pool, err := x509.SystemCertPool()
	if err != nil || pool == nil {
		pool = x509.NewCertPool()
	}
	cfg := &tls.Config{RootCAs: pool, MinVersion: tls.VersionTLS12}
	pinned := readCerts(certFile)
	if len(pinned) == 0 {
		return cfg
	}
	for _, c := range pinned {
		pool.AddCert(c)
	}
	cfg.InsecureSkipVerify = true // verification is VerifyConnection's, below
	cfg.VerifyConnection = func(cs tls.ConnectionState) error {
		return verifyDaemon(cs, pinned, pool, host, time.Now())
	}
	return cfg
}

// verifyDaemon accepts the pinned certificate itself, else a chain to roots valid for
// host, the name or address dialled (not the connection's ServerName: Go sends no
// server name for an IP address, which would check no name at all). Its errors are
// tls.CertificateVerificationError, as crypto/tls's own verification returns them.
func verifyDaemon(cs tls.ConnectionState, pinned []*x509.Certificate, roots *x509.CertPool, host string, now time.Time) error {
	if err := checkDaemon(cs, pinned, roots, host, now); err != nil {
		return &tls.CertificateVerificationError{UnverifiedCertificates: cs.PeerCertificates, Err: err}
	}
	return nil
}

func checkDaemon(cs tls.ConnectionState, pinned []*x509.Certificate, roots *x509.CertPool, host string, now time.Time) error {
	if len(cs.PeerCertificates) == 0 {
		return errors.New("the daemon presented no certificate")
	}
	leaf := cs.PeerCertificates[0]
	for _, p := range pinned {
		if !leaf.Equal(p) {
			continue
		}
		if now.Before(leaf.NotBefore) || now.After(leaf.NotAfter) {
			return fmt.Errorf("the daemon's certificate is valid from %s to %s, not now: renew http.tls_cert",
				leaf.NotBefore.Format(time.RFC3339), leaf.NotAfter.Format(time.RFC3339))
		}
		return nil
	}
	inter := x509.NewCertPool()
	for _, c := range cs.PeerCertificates[1:] {
		inter.AddCert(c)
	}
	_, err := leaf.Verify(x509.VerifyOptions{Roots: roots, Intermediates: inter, DNSName: host, CurrentTime: now})
	return err
}

// urlHost returns the host name or address of a URL ("127.0.0.1", "::1",
// "bench-pc.lab"); "" when it does not parse.
func urlHost(raw string) string {
	u, err := url.Parse(raw)
	if err != nil {
		return ""
	}
	return u.Hostname()
}

// readCerts returns the certificates in a PEM file; none when it cannot be read.
func readCerts(path string) []*x509.Certificate {
	rest, err := os.ReadFile(path)
	if err != nil {
		return nil
	}
	var out []*x509.Certificate
	for {
		var b *pem.Block
		b, rest = pem.Decode(rest)
		if b == nil {
			return out
		}
		if c, err := x509.ParseCertificate(b.Bytes); err == nil && b.Type == "CERTIFICATE" {
			out = append(out, c)
		}
	}
}

// listKnown formats known names for an error: all of them up to max, then a count.
func listKnown(names []string, max int) string {
	if len(names) == 0 {
		return "none"
	}
	if len(names) <= max {
		return strings.Join(names, ", ")
	}
	return fmt.Sprintf("%s and %d more", strings.Join(names[:max], ", "), len(names)-max)
}
