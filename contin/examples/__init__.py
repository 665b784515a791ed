"""Problem files shipped with contin (package data): `contin run --list-examples`."""
