// Package ptytest gives tests a real pseudo-terminal to stand in for a logger's serial
// port: the test writes on the master as the logger would, and the code under test
// opens the slave path (or a symlink to it) through go.bug.st/serial.
//
// Unplugging is closing both ends; replugging is a new pseudo-terminal behind the same
// symlink, as a udev by-id link behaves when a USB adapter comes back.
package ptytest
