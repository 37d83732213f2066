package main

// version is the tool version printed in every report.
const version = "0.1.0-dev"
