"""Where site pKa values are estimated: parent value plus substituent terms."""
