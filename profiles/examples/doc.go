// Package examples holds every example file of the project in one place,
// and builds the demo's into the commands.
//
//	profiles/   network profiles of our own scenarios (a warehouse Wi-Fi,
//	            a switched cell, an AGV corridor, a shared uplink)
//	loops/      loop files (a conveyor, a pick arm, a pump)
//	scenarios/  soak scenarios
//	demo/       the loop and profile `monitor demo` runs (built in: Demo)
//	checks/     loops, profiles and scenarios the end-to-end tests run
//
// Place in the flow: the files a run starts from. Tests and the runnable
// examples of the entry points (profiles, estimate, estimate/engine) load
// them from here by path; nothing else in the repository keeps example files (test
// fixtures of one package, such as malformed files, stay in that package's
// testdata).
package examples
