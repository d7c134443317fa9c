"""Validate: raw sheets -> a Schedule, or every problem at once, each with its cell."""
