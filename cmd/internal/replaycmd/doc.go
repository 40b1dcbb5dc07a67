// Package replaycmd is the replay command, shared by the gateway
// executable (`gridloupe replay`) and the offline one
// (cmd/gridloupe-offline): flags, opening a CSV, WAV, COMTRADE or raw PCM
// recording, the pipeline over it and the records on stdout. It also
// turns a validated config into the computations' setup and the
// pipeline's configuration (SetupFromConfig, PipelineConfig, ResolveRate,
// CheckRate), which the gateway's other commands use too. It links
// nothing of the network stack, the store or MQTT, so that the offline
// executable stays small (README "Offline analysis").
package replaycmd
