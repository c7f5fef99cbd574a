"""The soakline command line: exit codes, messages, the JSON it writes, the demo."""
