"""Click commands: parse, call a service, render. No SQL, no science."""
