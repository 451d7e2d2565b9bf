"""Published models, one module per source (ITU-R P.525, P.838, P.530, P.841; ITU-T G.826; Rayleigh/Rice fading;
polarisation mismatch; link budget)."""
