from fabric2seis.cli import console

console()
