"""Absorption: the trade's attenuation coefficient and Meep's conductivity.

Meep multiplies epsilon by (1 + i sigma_D / omega) (Meep's Materials.md,
"Conductivity and complex epsilon"). With n_c = n sqrt(1 + i sigma_D/omega)
~ n (1 + i sigma_D / (2 omega)) the intensity decays as
exp(-2 (omega/c) Im n_c y) = exp(-n sigma_D y) in Meep units (c = 1), so the
intensity attenuation coefficient is alpha = n * sigma_D, independent of
frequency. This is the one place the conversion is written.
"""


def d_conductivity(alpha_per_um, index):
    """Meep ``D_conductivity`` (1/µm) for intensity attenuation ``alpha_per_um`` (1/µm)."""
    return alpha_per_um / index


def per_um(alpha_per_cm):
    """Attenuation coefficient 1/cm -> 1/µm."""
    return alpha_per_cm * 1e-4
