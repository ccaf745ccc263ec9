"""The publications the surge screening, the transient analysis and their record cite, written once so that
a finding and the record's working give one source one reference number. Each was looked up and confirmed
(title, authors, year, publisher or journal); what the project did not confirm is not cited here."""

#: The textbook the wave speed, Joukowsky's rise and the method of characteristics are taken from.
WYLIE_1993 = ("Wylie, E. B., Streeter, V. L. and Suo, L. (1993). Fluid Transients in Systems. Prentice Hall, "
              "Englewood Cliffs NJ")
WAVE_REF = (WYLIE_1993 + ": the wave speed of Korteweg (1878) with the restraint factor c₁ of thin and thick walls, "
            "and Joukowsky's rise ΔH = a ΔV/g for a stop faster than 2L/a.")
MOC_REF = (WYLIE_1993 + ": the method of characteristics and its boundary conditions (reservoirs, valves, junctions, "
           "pumps, surge tanks and air vessels).")
DVCM_REF = ("Bergant, A., Simpson, A. R. and Tijsseling, A. S. (2006). Water hammer with column separation: a historical "
            "review. Journal of Fluids and Structures 22(2): 135-171: the discrete vapour cavity model.")
