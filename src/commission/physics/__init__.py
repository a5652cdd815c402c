"""Pure numerical models behind the checks: numbers and arrays in, numbers and dataclasses out."""
