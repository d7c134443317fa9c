"""The drop folder: folder layout and safe moves, converting claimed files, the polling loop."""
