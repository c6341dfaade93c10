// Preloaded into a child process by tests that bound memory: prints the process's peak resident
// set (kilobytes, getrusage ru_maxrss) on stderr as it exits.
process.on('exit', () => process.stderr.write(`peak-rss-kb ${process.resourceUsage().maxRSS}\n`));
