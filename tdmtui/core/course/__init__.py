"""The dose course judged as a whole: timing checks, usable levels, current regimen."""
