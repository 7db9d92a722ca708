"""Physical constants and the bibliography used by the calcs package.

Each constant carries its source. ``REFERENCES`` maps a short key to a full
citation; method functions name their keys in ``REFERENCES_BY_METHOD`` and in
their docstrings, and the scenario layer returns the keys it used so that a
dossier can print the citations.
"""

#: Molar gas constant [J/(mol K)]; exact since the 2019 SI redefinition
#: (CODATA 2018, R = N_A k).
R = 8.314462618

#: Celsius zero on the kelvin scale [K]; exact by definition (SI Brochure).
T_ZERO_C = 273.15

#: Standard atmosphere [Pa]; exact by definition (NIST SP 811, Appendix B).
ATM = 101325.0

#: Thermochemical kilocalorie [J]; exact (NIST SP 811, Appendix B: 1 cal_th = 4.184 J).
KCAL = 4184.0

#: Seconds in one hour [s].
HOUR = 3600.0

#: Seconds in 24 h [s], the time base of TD24.
DAY = 86400.0

REFERENCES: dict[str, str] = {
    "stoessel2008": (
        "F. Stoessel, Thermal Safety of Chemical Processes: Risk Assessment and Process "
        "Design, Wiley-VCH, Weinheim, 2008 (2nd ed. 2020)."
    ),
    "stoessel1993": (
        "F. Stoessel, 'What is your thermal risk?', Chem. Eng. Prog. 89(10) (1993) 68-75."
    ),
    "townsend_tou1980": (
        "D.I. Townsend, J.C. Tou, 'Thermal hazard evaluation by an accelerating rate "
        "calorimeter', Thermochim. Acta 37 (1980) 1-30."
    ),
    "keller1997": (
        "A. Keller, D. Stenger, P. Dyer-Smith, F. Stoessel, 'Estimation of the time to "
        "maximum rate using dynamic DSC experiments', J. Loss Prev. Process Ind. 10(1) "
        "(1997) 31-41."
    ),
    "kissinger1957": (
        "H.E. Kissinger, 'Reaction kinetics in differential thermal analysis', Anal. Chem. "
        "29(11) (1957) 1702-1706."
    ),
    "astm_e2890": (
        "ASTM E2890, Standard Test Method for Kinetic Parameters for Thermally Unstable "
        "Materials by Differential Scanning Calorimetry Using the Kissinger Method, ASTM "
        "International."
    ),
    "astm_e698": (
        "ASTM E698, Standard Test Method for Kinetic Parameters for Thermally Unstable "
        "Materials Using Differential Scanning Calorimetry and the Flynn/Wall/Ozawa Method, "
        "ASTM International."
    ),
    "ozawa1965": "T. Ozawa, Bull. Chem. Soc. Jpn. 38 (1965) 1881.",
    "flynn_wall1966": "J.H. Flynn, L.A. Wall, J. Polym. Sci. B 4 (1966) 323.",
    "doyle1962": "C.D. Doyle, J. Appl. Polym. Sci. 6 (1962) 639.",
    "senum_yang1977": (
        "G.I. Senum, R.T. Yang, 'Rational approximations of the integral of the Arrhenius "
        "function', J. Therm. Anal. 11 (1977) 445-447."
    ),
    "akahira_sunose1971": (
        "T. Akahira, T. Sunose, Res. Rep. Chiba Inst. Technol. (1971); M.J. Starink, "
        "Thermochim. Acta 404 (2003) 163-176."
    ),
    "friedman1964": "H.L. Friedman, J. Polym. Sci. C 6 (1964) 183.",
    "ictac2011": (
        "S. Vyazovkin, A.K. Burnham, J.M. Criado, L.A. Perez-Maqueda, C. Popescu, "
        "N. Sbirrazzuoli, 'ICTAC Kinetics Committee recommendations for performing kinetic "
        "computations on thermal analysis data', Thermochim. Acta 520 (2011) 1-19."
    ),
    "ictac2014": (
        "S. Vyazovkin et al., 'ICTAC Kinetics Committee recommendations for collecting "
        "experimental thermal analysis data for kinetic computations', Thermochim. Acta 590 "
        "(2014) 1-23."
    ),
    "astm_e537": (
        "ASTM E537, Standard Test Method for The Thermal Stability of Chemicals by "
        "Differential Scanning Calorimetry, ASTM International."
    ),
    "prout_tompkins1944": (
        "E.G. Prout, F.C. Tompkins, 'The thermal decomposition of potassium permanganate', "
        "Trans. Faraday Soc. 40 (1944) 488-498."
    ),
    "sestak_berggren1971": (
        "J. Sestak, G. Berggren, 'Study of the kinetics of the mechanism of solid-state "
        "reactions at increasing temperatures', Thermochim. Acta 3 (1971) 1-12."
    ),
    "malek1992": (
        "J. Malek, 'The kinetic analysis of non-isothermal data', Thermochim. Acta 200 (1992) "
        "257-269."
    ),
    "burnham_anderson2002": (
        "K.P. Burnham, D.R. Anderson, Model Selection and Multimodel Inference, 2nd ed., "
        "Springer, New York, 2002."
    ),
    "fisher1992": (
        "H.G. Fisher et al., Emergency Relief System Design Using DIERS Technology (DIERS "
        "Project Manual), AIChE, New York, 1992."
    ),
    "gum2008": (
        "JCGM 100:2008, Evaluation of measurement data - Guide to the expression of "
        "uncertainty in measurement (GUM)."
    ),
    "fisher_goetz1991": (
        "H.G. Fisher, D.D. Goetz, J. Loss Prev. Process Ind. 4 (1991) 305-316."
    ),
    "astm_e1981": (
        "ASTM E1981, Standard Guide for Assessing Thermal Stability of Materials by Methods "
        "of Accelerating Rate Calorimetry, ASTM International."
    ),
    "semenov1928": "N.N. Semenov, Z. Phys. 48 (1928) 571 (thermal explosion theory).",
    "frank_kamenetskii1955": (
        "D.A. Frank-Kamenetskii, Diffusion and Heat Transfer in Chemical Kinetics, "
        "Princeton University Press, 1955 (2nd ed. Plenum, 1969)."
    ),
    "yoshida1995": (
        "T. Yoshida, Y. Wada, N. Foster, Safety of Reactive Chemicals and Pyrotechnics, "
        "Elsevier (Industrial Safety Series), 1995."
    ),
    "un_mtc_app6": (
        "United Nations, Recommendations on the Transport of Dangerous Goods, Manual of "
        "Tests and Criteria, ST/SG/AC.10/11 (Rev.6, 2015 onwards), Appendix 6."
    ),
    "clp_annex1": (
        "Regulation (EC) No 1272/2008 (CLP), Annex I, sections 2.8.4.2 and 2.17.4.1."
    ),
    "poling2001": (
        "B.E. Poling, J.M. Prausnitz, J.P. O'Connell, The Properties of Gases and Liquids, "
        "5th ed., McGraw-Hill, 2001 (Antoine data as distributed in the 'chemicals' "
        "package, Chemical Engineering Design Library)."
    ),
    "iapws_if97": (
        "IAPWS, Revised Release on the IAPWS Industrial Formulation 1997 for the "
        "Thermodynamic Properties of Water and Steam (IAPWS-IF97), 2007."
    ),
    "nist_sp811": (
        "A. Thompson, B.N. Taylor, Guide for the Use of the International System of Units "
        "(SI), NIST Special Publication 811, 2008 edition."
    ),
    "harsbook_ch5": (
        "HarsNet / HarsBook, chapter 5 'Reaction Calorimetry', EC thematic network "
        "BET2-0572."
    ),
    "regenass1997": (
        "W. Regenass, 'The development of heat flow calorimetry as a tool for process "
        "optimization and process safety', J. Therm. Anal. 49 (1997) 1661-1675."
    ),
    "hofelich_thomas1989": (
        "T.C. Hofelich, R.C. Thomas, 'The use/misuse of the 100 degree rule in the "
        "interpretation of thermal hazard tests', Int. Symp. Runaway Reactions, CCPS/AIChE, "
        "1989."
    ),
    "onset_misuse2002": (
        "'On the use and misuse of detected onset temperature of calorimetric experiments "
        "for reactive chemicals', J. Loss Prev. Process Ind. 15(3) (2002) 163-168."
    ),
    "onset_sensitivity2017": (
        "'The physics and metaphysics of the sensitivity of calorimetric instruments and "
        "human senses', Process Saf. Prog. 36 (2017) 280-283."
    ),
    "methods_md": (
        "Exoledger METHODS.md: thermal-safety methods, equations, sources and check cases "
        "(project note)."
    ),
    "steinbach1999": (
        "J. Steinbach, Safety Assessment for Chemical Processes, Wiley-VCH, Weinheim, 1999."
    ),
    "westerterp_molga2006": (
        "K.R. Westerterp, E.J. Molga, 'Safety and runaway prevention in batch and semibatch "
        "reactors - a review', Chem. Eng. Res. Des. 84 (2006) 543-552."
    ),
    "wallis1969": (
        "G.B. Wallis, One-dimensional Two-phase Flow, McGraw-Hill, New York, 1969 (flooding "
        "correlation)."
    ),
    "leung1986": (
        "J.C. Leung, 'Simplified vent sizing equations for emergency relief requirements in "
        "reactors and storage vessels', AIChE J. 32 (1986) 1622-1634; and 'A generalized "
        "correlation for one-component homogeneous equilibrium flashing choked flow', AIChE J. "
        "32 (1986) 1743-1746 (the omega method)."
    ),
    "fauske1985": (
        "H.K. Fauske, 'Emergency relief system design', Chem. Eng. Prog. 81(8) (1985) 53-56 "
        "(equilibrium rate model)."
    ),
    "fisher1992_diers": (
        "H.G. Fisher et al., Emergency Relief System Design Using DIERS Technology, AIChE, "
        "New York, 1992."
    ),
    "ccps2017_relief": (
        "CCPS, Guidelines for Pressure Relief and Effluent Handling Systems, 2nd ed., AIChE/"
        "Wiley, 2017."
    ),
}

#: Citations above that the developers have not yet confirmed against the original text (the
#: bibliographic details or the form of the method are as remembered): kept with the code and
#: its tests. A signed dossier prints the citation only; a committee cites its sources and does
#: not sign how they were looked up. Confirm and remove entries as originals are read.
UNCONFIRMED: dict[str, str] = {
    "senum_yang1977": "bibliographic details",
    "hofelich_thomas1989": "bibliographic details",
    "steinbach1999": "bibliographic details",
    "westerterp_molga2006": "bibliographic details",
    "wallis1969": "the flooding correlation's constants",
    "leung1986": "the equations as used in calcs.relief",
    "fauske1985": "bibliographic details",
    "fisher1992_diers": "the gassy-system form",
    "ccps2017_relief": "the gassy-system form",
    "astm_e537": "the onset construction",
    "prout_tompkins1944": "bibliographic details",
    "sestak_berggren1971": "bibliographic details",
    "malek1992": "bibliographic details",
    "fisher1992": "the phi correction",
}
