"""The site folder format only: read, validate (every file up front), save, start a new one."""
