"""Pure, vectorised models: on-resistance, self-heating, leakage, bipolar switch, price."""
