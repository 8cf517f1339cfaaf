package config

import (
	"fmt"
	"net"
	"regexp"
	"strconv"
	"strings"

	"github.com/settle-lab/settle/internal/yamlfile"
)

// Limits on a fixed target temperature, in °C.
const (
	// MinCelsius is absolute zero: 0 K = −273.15 °C by the SI definition of the
	// degree Celsius (from memory).
	MinCelsius = -273.15
	// MaxCelsius is a sanity bound just above the highest thermocouple range: the
	// type B reference function ends at 1820 °C (NIST Monograph 175, via
	// shared/reference/reference-values.md, type B rows). A larger value is almost
	// surely a typo.
	MaxCelsius = 2000.0
)

// Validate checks the decoded configuration and returns every problem it finds,
// joined with errors.Join, each with its key path (e.g.
// "loggers[0].line.columns[2].index: must be ≥ 1"). It returns nil for a valid
// configuration. Load and Parse call it; call it yourself on a Config built in code.
func (c *Config) Validate() error {
	return yamlfile.Join(c.validate())
}

// checker collects problems.
type checker struct{ problems []*Problem }

func (k *checker) add(key, format string, args ...any) {
	k.problems = append(k.problems, &Problem{Key: key, Msg: fmt.Sprintf(format, args...)})
}

func (c *Config) validate() []*Problem {
	k := &checker{}
	checkListen(k, c.Listen)
	if strings.TrimSpace(c.DataDir) == "" {
		k.add("data_dir", "must not be empty")
	}
	index := channelIndex(c.Channels)
	c.checkLoggers(k, index)
	c.checkChannels(k, index)
	c.checkServices(k)
	return k.problems
}

// channelIndex maps each channel name to the index of its first channel.
func channelIndex(channels []Channel) map[string]int {
	index := map[string]int{}
	for i, ch := range channels {
		if _, dup := index[ch.Name]; !dup && ch.Name != "" {
			index[ch.Name] = i
		}
	}
	return index
}

// uniqueName checks the name of entry i of a list (key is the entry's key path, list
// the list's): not empty, and not one an earlier entry took. names maps each name to
// the first entry that took it and is filled as the entries are checked.
func (k *checker) uniqueName(key, kind, name string, i int, names map[string]int, list string) {
	switch first, dup := names[name]; {
	case name == "":
		k.add(key+".name", "must not be empty")
	case dup:
		k.add(key+".name", "duplicate %s %q (first at %s[%d])", kind, name, list, first)
	default:
		names[name] = i
	}
}

// checkChannels checks every channel; index is from channelIndex.
func (c *Config) checkChannels(k *checker, index map[string]int) {
	if len(c.Channels) == 0 {
		k.add("channels", "at least one channel is needed")
	}
	names := map[string]int{}
	for i, ch := range c.Channels {
		key := fmt.Sprintf("channels[%d]", i)
		k.uniqueName(key, "channel", ch.Name, i, names, "channels")
		checkAmbient(k, key+".ambient", ch, index)
		checkTargets(k, key, ch.Targets)
		c.checkRole(k, key, ch)
		k.problems = append(k.problems, SpecimenProblems(key, ch.Specimen)...)
	}
}

// checkRole checks a channel's role: an ambient sensor (by role, or named as another
// channel's ambient) is never forecast, so targets, a run or a specimen on it are
// mistakes.
func (c *Config) checkRole(k *checker, key string, ch Channel) {
	var user string
	for i, other := range c.Channels {
		if other.Ambient == ch.Name && ch.Name != "" && other.Name != ch.Name {
			user = fmt.Sprintf("channels[%d].ambient", i)
			break
		}
	}
	switch ch.Role {
	case "", "position":
		if ch.Role == "position" && user != "" {
			k.add(key+".role", "position, but %s names this channel as its ambient: an ambient sensor cannot hold a specimen", user)
			return
		}
		if user == "" {
			return
		}
	case "ambient":
	default:
		k.add(key+".role", "must be position or ambient, got %q", ch.Role)
		return
	}
	why := "role ambient"
	if user != "" {
		why = "named by " + user
	}
	if len(ch.Targets) > 0 {
		k.add(key+".targets", "an ambient sensor (%s) is not forecast: remove its targets", why)
	}
	if ch.Run != nil {
		k.add(key+".run", "an ambient sensor (%s) holds no specimen: remove its run", why)
	}
	if ch.Specimen != nil {
		k.add(key+".specimen", "an ambient sensor (%s) holds no specimen: remove its specimen", why)
	}
}

func checkAmbient(k *checker, key string, ch Channel, index map[string]int) {
	switch ambientFault(ch, index) {
	case ambientSelf:
		k.add(key, "channel %q cannot be its own ambient; name another channel, or leave ambient out to fit it", ch.Name)
	case ambientMissing:
		k.add(key, "no channel named %q in channels", ch.Ambient)
	}
}

// What is wrong with a channel's ambient, from ambientFault.
const (
	ambientSelf    = "self"    // it names the channel itself
	ambientMissing = "missing" // it names no channel
)

// ambientFault says what is wrong with ch's ambient ("" when it is absent or names
// another channel); index is from channelIndex. Validate and ChannelSpecs share it.
func ambientFault(ch Channel, index map[string]int) string {
	switch {
	case ch.Ambient == "":
	case ch.Ambient == ch.Name:
		return ambientSelf
	default:
		if _, ok := index[ch.Ambient]; !ok {
			return ambientMissing
		}
	}
	return ""
}

func checkTargets(k *checker, chKey string, targets []Target) {
	seen := map[string]int{}
	for i, t := range targets {
		key := fmt.Sprintf("%s.targets[%d]", chKey, i)
		k.uniqueName(key, "target", t.Name, i, seen, chKey+".targets")
		checkTarget(k, key, t)
	}
}

// checkTarget enforces the target forms the engine takes: {celsius}, {within} and
// {within, hold}. A band around a fixed temperature ({celsius, within}) is refused here
// as the engine refuses it (config.ChannelSpecs), so that `settle config check` never
// passes a file the daemon will not start with.
func checkTarget(k *checker, key string, t Target) {
	switch {
	case t.Celsius == nil && t.Within == nil:
		k.add(key, "give celsius (a fixed temperature) or within (a band around the settling temperature)")
	case t.Celsius != nil && t.Within != nil:
		k.add(key, "give celsius or within, not both: within is a band around the temperature the specimen settles toward; "+
			"for a test temperature, measure the conditioning room or chamber as the channel's ambient and give within (and hold)")
	case t.Celsius != nil && t.Within == nil && t.Hold != 0:
		k.add(key+".hold", "hold needs within (the band to stay in), e.g. within: 1")
	}
	if t.Celsius != nil && !(*t.Celsius >= MinCelsius && *t.Celsius <= MaxCelsius) {
		k.add(key+".celsius", "must be between %g and %g °C, got %g", MinCelsius, MaxCelsius, *t.Celsius)
	}
	if t.Within != nil && !(*t.Within > 0) {
		k.add(key+".within", "must be > 0 °C, got %g", *t.Within)
	}
	if t.Hold < 0 {
		k.add(key+".hold", "must not be negative, got %s", t.Hold)
	}
}

func (c *Config) checkLoggers(k *checker, channels map[string]int) {
	if len(c.Loggers) == 0 {
		k.add("loggers", "at least one logger is needed")
	}
	names := map[string]int{}
	readBy := map[string]string{} // channel name → key of the column that reads it
	for i, l := range c.Loggers {
		key := fmt.Sprintf("loggers[%d]", i)
		k.uniqueName(key, "logger", l.Name, i, names, "loggers")
		checkLogger(k, key, l, channels, readBy)
	}
}

// checkListen checks that listen is host:port with a port number 0–65535 (0: any free
// port) and a host that is empty (every address), an IP address or a host name.
func checkListen(k *checker, listen string) {
	host, port, err := net.SplitHostPort(listen)
	if err != nil {
		k.add("listen", "want host:port such as %q or %q, got %q", DefaultListen, ":8391", listen)
		return
	}
	if n, err := strconv.Atoi(port); err != nil || n < 0 || n > 65535 {
		k.add("listen", "port %q of %q: want a number 0–65535, such as 8391", port, listen)
	}
	if ip := net.ParseIP(host); host != "" && ip == nil && (!hostName.MatchString(host) || strings.Trim(host, "0123456789.") == "") {
		k.add("listen", "host %q of %q: want an IP address (127.0.0.1, ::1), a host name or nothing (every address)", host, listen)
	}
}

// hostName matches a DNS host name (RFC 1123 labels); one of only digits and dots is
// refused separately, as a mistyped IPv4 address.
var hostName = regexp.MustCompile(`^(?:[A-Za-z0-9](?:[A-Za-z0-9-]{0,61}[A-Za-z0-9])?\.)*[A-Za-z0-9](?:[A-Za-z0-9-]{0,61}[A-Za-z0-9])?$`)
