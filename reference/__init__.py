"""Reference evolvers and the published figures they are compared with."""
