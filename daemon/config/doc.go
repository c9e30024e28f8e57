// Package config is holdfast's YAML config: the schema (Config and the
// types under it), decoding with the line of every key, and every check.
// LoadConfig, ParseConfig and CheckConfig report all problems at once as a
// *ConfigError, each Problem with its file:line and path, and fill in the
// defaults and the values the runtime needs resolved (SI limits, secrets
// read from their files or credentials). Summary describes a checked config.
//
// A Config is a plain value: it can be checked, printed and compared
// without starting anything. config must not open links, the store or a
// listener, start goroutines or keep state; the running service is
// package daemon.
package config
