// Package layout holds no code: its test checks the direction of the imports between
// settle's rooms (DEVELOPERS.md, "Rooms and their corridors"), so a change that runs
// a corridor backwards fails the tests instead of waiting for a reader to notice.
package layout
