// Package deploy holds what an operator installs next to the settle binary, and the
// tests that keep those files honest:
//
//   - systemd/settle.service: a hardened unit running `settle run` as the unprivileged
//     user settle (group dialout for the serial ports), with the journal in
//     /var/lib/settle (StateDirectory) and the config in /etc/settle. systemd/settle.sysusers
//     creates the user and systemd/settle-modules.conf loads the USB serial drivers at boot.
//   - udev/99-settle-logger.rules: an example that gives each logger's USB adapter a
//     stable name, /dev/settle/<rack>.
//   - examples/*.yaml: example configurations for one bench and for a furnace room.
//   - prometheus/prometheus.yml and prometheus/settle-alerts.yml: a scrape configuration
//     for several daemons with lab and bench labels, and alert rules, unit-tested by
//     prometheus/settle-alerts_test.yml.
//
// The package has no API; its tests run promtool (check rules, test rules, check config)
// and systemd-analyze (verify, security) when they are installed. A missing promtool
// skips those tests locally and fails them when CI=true, so CI proves they ran.
//
// The live test (live_test.go, about 20 s, skipped with -short) builds ../cmd/settle,
// runs two `settle run --demo` daemons and a real Prometheus server on loopback ports
// with the real settle-alerts.yml, and reads back through Prometheus's HTTP API that both
// targets are up with their lab and bench labels, that forecasts arrive, and that
// SettleSpecimenReadyToHandle fires when a demo specimen reaches its handling target;
// it also runs `promtool check metrics` on a live scrape. It stops every process it
// started, also when it fails.
// .ci/packages.txt (at the top of the repository) lists the Debian packages CI installs for them, one per line.
package deploy
