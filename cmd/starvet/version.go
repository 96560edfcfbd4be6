package main

// toolVersion is recorded with every run in the ledger.
const toolVersion = "starvet 0.1.0"
