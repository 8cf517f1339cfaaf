package config

import (
	"crypto/tls"
	"errors"
	"fmt"
	"net"
	"os"
	"syscall"

	"github.com/settle-lab/settle/internal/yamlfile"
)

// Check loads the file at path as Load does and, when it is valid, looks at this
// computer for what a file alone cannot tell (see CheckHost). It returns the
// configuration (nil when any problem is an error) and every problem, warnings
// included, each naming the file and, where the file has the key, its line.
func Check(path string) (*Config, []*Problem) {
	data, err := yamlfile.ReadFile(path)
	if err != nil {
		return nil, Problems(err)
	}
	c, err := Parse(path, data)
	if err != nil {
		return nil, Problems(err)
	}
	t, _ := yamlfile.ReadTree(data) // Parse has read it without a problem
	ps := t.Locate(c.CheckHost(), envKeys)
	for _, p := range ps {
		p.File = path
		if !p.Warning {
			c = nil
		}
	}
	return c, ps
}

// CheckHost checks a valid configuration against this computer: a TLS certificate or
// key that cannot be read, or that do not make a pair, is an error; a serial port
// that does not exist (the logger may be plugged in later: the daemon keeps trying
// it), is not a device or cannot be opened for reading and writing, and a listen
// port already taken, are warnings. It opens no serial port (opening one can reset
// an instrument) and binds the listen address only for a moment.
func (c *Config) CheckHost() []*Problem {
	k := &checker{}
	c.checkTLS(k)
	for i, l := range c.Loggers {
		checkPort(k, fmt.Sprintf("loggers[%d].port", i), l.Port)
	}
	checkListenFree(k, c.Listen)
	return k.problems
}

func (k *checker) warn(key, format string, args ...any) {
	k.problems = append(k.problems, &Problem{Key: key, Msg: fmt.Sprintf(format, args...), Warning: true})
}

func (c *Config) checkTLS(k *checker) {
	bad := false
	for _, f := range []struct{ key, path string }{{"http.tls_cert", c.HTTP.TLSCert}, {"http.tls_key", c.HTTP.TLSKey}} {
		if f.path == "" {
			continue
		}
		if _, err := os.ReadFile(f.path); err != nil {
			k.add(f.key, "cannot read %s: %v", f.path, unwrapPath(err))
			bad = true
		}
	}
	if bad || c.HTTP.TLSCert == "" || c.HTTP.TLSKey == "" {
		return
	}
	if _, err := tls.LoadX509KeyPair(c.HTTP.TLSCert, c.HTTP.TLSKey); err != nil {
		k.add("http", "tls_cert and tls_key are not a usable certificate and key: %v", err)
	}
}

// unwrapPath drops the operation and path of an *os.PathError, which the message
// names already.
func unwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

func checkPort(k *checker, key, port string) {
	fi, err := os.Stat(port)
	switch {
	case errors.Is(err, os.ErrNotExist):
		k.warn(key, "%s does not exist now; settle run starts anyway and keeps trying it (plug the logger in, or fix the path)", port)
	case err != nil:
		k.warn(key, "cannot look at %s: %v", port, unwrapPath(err))
	case fi.Mode()&os.ModeCharDevice == 0:
		k.warn(key, "%s is %s, not a serial device", port, fileKind(fi.Mode()))
	default:
		if err := canReadWrite(port); err != nil {
			k.warn(key, "%s cannot be opened for reading and writing by this user (%v); on Linux, add the user to the group that owns it (often dialout)", port, err)
		}
	}
}

// canReadWrite asks the kernel whether this user may open path for reading and
// writing, without opening it.
func canReadWrite(path string) error {
	const rw = 0x4 | 0x2 // R_OK | W_OK, access(2)
	return syscall.Access(path, rw)
}

// checkListenFree warns when the listen address cannot be bound now: taken by another
// program (another settle on the same port, say) or not an address of this computer.
// Port 0 (any free port) is not checked.
func checkListenFree(k *checker, listen string) {
	if _, port, err := net.SplitHostPort(listen); err != nil || port == "0" {
		return
	}
	ln, err := net.Listen("tcp", listen)
	if err == nil {
		ln.Close()
		return
	}
	if errors.Is(err, syscall.EADDRINUSE) {
		k.warn("listen", "%s is in use by another program (another settle?); settle run would fail to start: stop it or choose another port", listen)
		return
	}
	k.warn("listen", "cannot listen on %s on this computer: %v", listen, unwrapOp(err))
}

// unwrapOp drops the "listen tcp ADDR:" prefix of a *net.OpError.
func unwrapOp(err error) error {
	var oe *net.OpError
	if errors.As(err, &oe) {
		return oe.Err
	}
	return err
}

func fileKind(m os.FileMode) string {
	switch {
	case m.IsRegular():
		return "a plain file"
	case m.IsDir():
		return "a directory"
	}
	return "a special file"
}
