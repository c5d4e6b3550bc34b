// Package tests holds rigwire's end-to-end checks: the built commands run
// as separate processes and talk over real UDP sockets on loopback, and
// their results are compared with the laws the profiles state and with
// reference values from outside the project.
package tests
