"""The language server front: the only part of regvet that imports pygls and lsprotocol."""
