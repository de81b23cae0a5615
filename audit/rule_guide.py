"""What each finding code establishes, an example of the finding, and how to act on it.

One entry per registered code: ``(establishes, example, action)``.  :func:`audit.rules.collect`
attaches them to the :class:`audit.rules.Rule` records, so the registry carries them and
``truss-audit explain CODE`` and the SARIF rules section are generated from it; a
registered code without an entry here fails ``tests/test_rules.py``.
The examples are invented illustrations of the wording, not output of a real model.
"""

from __future__ import annotations

#: code -> (what a finding with this code establishes, an example finding, how to act on it)
GUIDE: dict[str, tuple[str, str, str]] = {
    # ----------------------------------------------------------------- engine
    "AU901": (
        "A check raised an exception, so nothing is known about what it was meant to establish; the audit "
        "fails rather than pass an unchecked model.",
        "check 'compatibility' crashed (ValueError: shapes (3,) and (4,) not aligned) at compatibility.py:88; "
        "its result is unknown",
        "Treat the model as not checked. Report the message (check name, exception, place) to the tool's "
        "maintainers with the model file; the other checks' findings still stand.",
    ),
    "AU902": (
        "The rebuilt stiffness could not be solved (a mechanism or a singular matrix), so no displacement, "
        "force or reaction could be recomputed and every comparison against a recomputation is not run.",
        "the model could not be solved, so nothing could be recomputed: the model is unstable: 1 mechanism",
        "Read the stability findings (ST1xx) first: fix the supports or add the missing member; a linear "
        "analysis of a mechanism has no valid results to check.",
    ),
    # ----------------------------------------------------------- combinations
    "CB001": (
        "Records that a combination was not compared with its cases because some of those cases carry no "
        "reported results; nothing is claimed about the combination.",
        "combination 'ULS1' not checked against its cases: case 'wind' has no reported forces",
        "Export the results of every case the combination uses, or accept that the combination is checked "
        "only against the recomputation.",
    ),
    "CB002": (
        "The reported combination equals the declared factors times its reported cases, so any difference "
        "from the recomputation is inherited from the cases, not made by combining.",
        "combination 'ULS1' is 1.35·dead + 1.5·snow of the reported cases; its differences come from 'snow'",
        "Look at the findings of the cases named; the combining step itself is right.",
    ),
    "CB101": (
        "A reported combined value is not the factored sum of the reported values of its cases, beyond the "
        "tolerance: the combination step of the source is wrong or used other case results.",
        "combination 'ULS1', member 4: reported -182.0 kN, factored sum of the reported cases -176.4 kN",
        "Check the factors and the cases the source combined (an omitted case, a stale case result, a factor "
        "typed wrongly) and re-run the combination.",
    ),
    "CB102": (
        "The reported combination is reproduced, within tolerance, by factors other than the declared ones: "
        "the source most likely combined with those factors.",
        "combination 'ULS1' matches 1.35·dead + 1.35·snow, not the declared 1.35·dead + 1.5·snow",
        "Correct the factors in the source's combination definition (or in the model if the declared ones "
        "are wrong) and re-export.",
    ),
    "CB103": (
        "The model has tension-only or compression-only members, so superposition does not hold; the reported "
        "combination is the factored sum of its reported cases, and the combination solved as its own case "
        "(its factored actions together) differs from that sum beyond the tolerance.",
        "combination 'ULS' is the factored sum of its reported cases, but superposition does not hold for this "
        "model: solved as its own case, member D2 is 0 kN, not 7.07 (off by 7.07, 41 % of the largest force)",
        "Have the source solve each combination as a load case of its own (its factored loads applied "
        "together) instead of adding up case results.",
    ),
    # ---------------------------------------------------------- compatibility
    "CP102": (
        "A tension-only (compression-only) member whose reported end displacements shorten (lengthen) it is "
        "slack and carries nothing, yet a force is reported for it: the reported forces and displacements do "
        "not describe one state of the non-linear model.",
        "member D2 is slack by the reported displacements (its length change -0.00042 m is on its slack side) "
        "but is reported with a force of 3 kN",
        "Check that the source models the member as tension-only (or compression-only) and that forces and "
        "displacements come from the same converged non-linear run.",
    ),
    "CP103": (
        "A tension-only member is reported in compression (or a compression-only member in tension) beyond the "
        "tolerance: a sense the member cannot carry, so the source did not treat it as declared.",
        "member D2 is tension-only but is reported in compression (-8.49 kN)",
        "The source most likely analysed the member as linear: re-run it with the member tension-only (or "
        "compression-only), or correct the model's behaviour if the member really is linear.",
    ),
    "CP001": (
        "Records that some members were not checked for compatibility because their force or an end "
        "displacement was not reported; nothing is claimed about those members.",
        "members 7 and 9 not checked for compatibility: displacements of node 'E' not reported",
        "Export every node's displacements and every member's force if those members must be checked.",
    ),
    "CP101": (
        "The reported force of a member is not EA/L times the elongation of its reported end displacements "
        "(less the free thermal and lack-of-fit elongation): the reported forces and displacements are not "
        "of one consistent analysis.",
        "member 12: reported 54.1 kN, EA/L·elongation of the reported displacements 49.8 kN (the pair "
        "implies EA = 2.17e5 kN)",
        "Compare the member's E and A with the source's; check that forces and displacements come from the "
        "same run and the same case.",
    ),
    # -------------------------------------------------------------- diagnosis
    "DX001": (
        "The differences from the recomputation were tested against every set of up to three causes the tool "
        "knows (signs, units, axes, members, loads, supports, springs, table slips and swaps) and none explains "
        "every reported number; the closest set and the numbers it leaves are named.",
        "no explanation found for the differences in case 'snow'; the closest set (DX104 at member 3) still "
        "leaves 4 numbers unexplained: member 5, member 7, ...",
        "Look at the numbers left unexplained: more than three errors, or one the tool does not model, are present.",
    ),
    "DX002": (
        "Every value of one kind (forces, displacements or reactions) is off by one constant factor that "
        "matches no pair of units the format knows.",
        "reported axial forces are 1.1 times the recomputed ones in case 'wind' (no unit ratio)",
        "Look for a load factor applied to the case, a scaled load, or a property multiplied in the source.",
    ),
    "DX101": (
        "The reported axial forces are the recomputed ones with the sign reversed: the source prints "
        "compression positive.",
        "all 21 reported axial forces of case 'snow' have the opposite sign to the recomputed ones",
        "Flip the sign when exporting (the format is tension positive), or tell the reader of the results.",
    ),
    "DX102": (
        "Forces are off by exactly the ratio of two force units: the source wrote them in another unit "
        "than the file declares.",
        "reported forces are 1000 times the recomputed ones: written in N, declared kN",
        "Declare the unit the source used in the results file's units, or convert before exporting.",
    ),
    "DX103": (
        "Displacements are off by exactly the ratio of two length units: written in another unit than declared.",
        "reported displacements are 1000 times the recomputed ones: written in mm, declared m",
        "Declare the length unit the source used, or convert the displacements before exporting.",
    ),
    "DX104": (
        "The differences are explained by one member having another EA in the source than in the model; "
        "the implied value is stated.",
        "member 3's axial stiffness in the source is 0.1005× the model's (the reported results fit EA = 2.1e+04 "
        "against 2.1e+05: a section one decimal place out)",
        "Check that member's section and material in the source against the drawings; correct whichever "
        "is wrong and re-run.",
    ),
    "DX105": (
        "The differences are explained by one load of the model being absent from the source's analysis.",
        "the reported results of case 'snow' are those without the 12.5 kN load at node 'D'",
        "Add the missing load in the source's case (or remove it from the model if it should not be there).",
    ),
    "DX106": (
        "The differences are explained by one load being applied twice in the source's analysis.",
        "the reported results of case 'snow' are those with the load at node 'D' applied twice",
        "Remove the duplicated load in the source's input.",
    ),
    "DX107": (
        "The differences are explained by one load applied at another node in the source's analysis.",
        "the reported results of case 'snow' are those with the load of node 'D' applied at node 'E'",
        "Move the load to the node the model names (or correct the model) and re-run.",
    ),
    "DX108": (
        "The differences are explained by a support (a restraint) that the source had and the model has not.",
        "the reported results are those of the model with node 'F' also restrained along y",
        "Decide which support is right; remove the extra restraint in the source or add it to the model.",
    ),
    "DX109": (
        "The differences are explained by a support of the model that the source did not have.",
        "the reported results are those of the model without the restraint of node 'C' along x",
        "Decide which support is right; add the restraint in the source or remove it from the model.",
    ),
    "DX110": (
        "The reported reactions are the recomputed ones with the sign reversed: the source gives the forces "
        "the structure exerts on the supports.",
        "all reported reactions of case 'snow' have the opposite sign (forces on the supports)",
        "Flip the reactions' sign when exporting: the format gives the force the support exerts on the structure.",
    ),
    "DX111": (
        "The differences are explained by one member missing from (or inactive in) the source's model: every "
        "reported number fits the model without it, its own force reported as zero or not at all.",
        "member D4 is left out of the source's model (or inactive in it): the reported numbers fit the model "
        "without it (its reported force is 0)",
        "Check whether the member exists: add it to the source's model (or remove it from the model) and re-run.",
    ),
    "DX112": (
        "The differences are explained by one load (a node's whole load, or one component of it) entered at "
        "another magnitude in the source; the node, the component and the fitted factor are stated.",
        "the load (0, -12) kN at node B7 is entered at 1.5× its value in the source",
        "Correct the load in the source's input (or in the model, if the source is right) and re-run.",
    ),
    "DX113": (
        "The differences are explained by an inclined support restrained along another direction in the source "
        "(an axis, or another angle); the fitted direction is stated.",
        "the support at node R2, restrained along (0.70711, -0.70711) in the model, is entered along y in the source",
        "Enter the roller's plane as the drawings give it (a direction, not an axis) in the source or the model.",
    ),
    "DX114": (
        "The differences are explained by one spring support of another stiffness in the source; the fitted "
        "stiffness is stated.",
        "the spring at node S1 is 10× as stiff in the source (k = 2e+05 against the model's 2e+04)",
        "Check the spring's stiffness and its unit in the source (a decimal place or kN/mm for kN/m) and re-run.",
    ),
    "DX115": (
        "One reported number disagrees while every other number agrees with the model: an isolated slip in the "
        "source's table (a typing error, a sign, a value copied from elsewhere); the corrected value is stated.",
        "the reported axial force at member U3 is 125.3 where the model gives 152.3: one number wrong in the source",
        "Correct that number in the source's output (or find why only it differs); the rest of the hand-off stands.",
    ),
    "DX116": (
        "Two labels are exchanged in the source's table: two members' forces, or two joints' displacements or "
        "reactions, are each the other's recomputed value.",
        "the axial forces of members D3 and D4 are exchanged in the source's table",
        "Fix the labels of those rows in the source's export; the analysis itself agrees with the model.",
    ),
    "DX117": (
        "Two components of one joint are exchanged in the source's table (x with y, or any pair in 3D).",
        "the displacements of joint U1 have their components swapped (x↔y) in the source's table",
        "Fix the column order of that joint's row in the source's export.",
    ),
    "DX118": (
        "The displacements (and reactions) along one axis have the opposite sign while member forces agree: "
        "the source measures that axis the other way (e.g. y downwards).",
        "the reported displacements and reactions along y have the opposite sign: the source measures y the other way",
        "Convert the axis when exporting (the format's axes are the model's) and re-run.",
    ),
    # ------------------------------------------------------------ equilibrium
    "EQ001": (
        "Records the joints or global balances that could not be checked because some forces or reactions "
        "were not reported; nothing is claimed about them.",
        "joints 'C' and 'D' not checked for equilibrium: forces of members 4 and 5 not reported",
        "Export every member force and every reaction if those joints must be checked.",
    ),
    "EQ101": (
        "At a joint, the loads, the reported member forces and the reported reactions do not sum to zero "
        "beyond the tolerance: the reported results cannot be an equilibrium state.",
        "node 'D', case 'snow': residual (0.0, -2.4) kN from loads, members 3, 4, 5 and the reactions",
        "Look at the forces of the members meeting at the joint (a wrong sign, a swapped member, a typo); "
        "the diagnosis findings may name the cause.",
    ),
    "EQ102": (
        "The loads and the reported reactions do not sum to zero: the reactions do not hold the applied loads.",
        "case 'snow': loads and reactions leave a net force of (0.0, 12.5) kN",
        "Check that every load of the case was applied in the source and every reaction exported.",
    ),
    "EQ103": (
        "The moments of the loads and reported reactions about the centroid do not sum to zero: the "
        "reactions balance the loads' sum but not their moment (a load or reaction at the wrong place).",
        "case 'wind': moment of loads and reactions about the centroid 18.0 kN·m",
        "Check the position of the loads and which supports carry reactions; the diagnosis may name a moved load.",
    ),
    # -------------------------------------------------------------- nonlinear
    "NL001": (
        "Records the state the auditor found for a case of a model with tension-only or compression-only "
        "members: which members are slack, and that the active structure is stable, with its degree of "
        "indeterminacy.",
        "'wind': 1 slack member(s): D2; the active structure (5 members) is stable and statically determinate "
        "(solved by active set in 2 iteration(s))",
        "Compare the slack members with the source's; a member slack here but loaded there (or the reverse) "
        "points to a behaviour the source did not model.",
    ),
    "NL101": (
        "The case has no solution: without the members that go slack the active structure is a mechanism, and "
        "the loads do work along it, so it could stand only if the named member took the sense it cannot "
        "carry (FORMAT.md). Proven from the mechanism's direction, not from a failed iteration.",
        "'uplift' has no solution: the structure is stable only if prop takes tension, which it cannot",
        "Add bracing that works in the needed sense, make the member linear if it really can take both senses, "
        "or treat the load case as one the structure cannot carry.",
    ),
    "NL102": (
        "The non-linear solve of the case reached its iteration cap without meeting the sign conditions, so "
        "nothing about the case is established; the audit fails rather than pass it.",
        "the non-linear solve did not converge in 260 iterations (sign violation 0.03 of the force scale left)",
        "Report the model to the tool's maintainers; meanwhile check the case by other means.",
    ),
    "DX121": (
        "The reported numbers of the case are reproduced by the model solved with every member linear, and "
        "not by the model as declared: the source analysed its tension-only or compression-only members as "
        "linear. The named members carry, in the source's numbers, the sense they cannot carry.",
        "the source treated member(s) D2 as linear (they carry compression in the source's numbers); the model "
        "solved with every member linear reproduces the reported numbers of 'wind'",
        "Re-run the source with those members tension-only (or compression-only), or correct the model if "
        "they really take both senses.",
    ),
    "DX122": (
        "The reported numbers of the case are reproduced by the model without its self weight, and not by the "
        "model with it: the source left the members' own weight out of the case.",
        "the source left out the self weight: without it the model reproduces every reported number of 'dead'",
        "Switch on the source's self-weight load for the case (unit weight on every member, the case's "
        "factor), or remove self_weight from the model if the case should not carry it.",
    ),
    "DX123": (
        "The combination's reported numbers are the factored sum of its reported cases, which superposition "
        "does not give for a model with tension-only or compression-only members (CB103 says by how much).",
        "the combination 'ULS' was superposed: the source's numbers are the factored sum of its reported cases",
        "Have the source solve the combination as a case of its own, its factored actions applied together.",
    ),
    # -------------------------------------------------------------- precision
    "HP101": (
        "States how many digits of the high-precision recomputation are proven, the certified lower bound "
        "on the smallest eigenvalue of the restrained stiffness, and the condition estimate.",
        "30 digits proven for every case; λ_lo = 4.1e3 certified; condition 2.3e6",
        "Information only: quote it when the recomputation's accuracy matters.",
    ),
    "HP102": (
        "The reported displacements are proven to be farther from the exact solution of the input than their "
        "rounding and the precision of the input data explain: the source's solve itself lost accuracy.",
        "case 'snow': reported displacements proven off the exact solution by 3.1e-4 relative, rounding allows 5e-6",
        "Re-run the source's analysis in double precision or with a better-conditioned model; check its "
        "solver settings.",
    ),
    "HP103": (
        "A reported quantity is proven to differ from the exact solution by more than half a unit in the last "
        "digit it prints.",
        "member 8, case 'snow': reported 41.27 kN, exact 41.2913... kN (more than its printed rounding)",
        "Usually harmless when within the tolerance; otherwise treat it like the RC finding it accompanies.",
    ),
    "HP104": (
        "The high-precision refinement stopped before reaching the requested digits, so fewer digits are "
        "proven than asked.",
        "case 'snow': refinement stopped at 18 of 30 digits (condition too large for the working precision)",
        "Accept the digits proven, or ask for fewer with --digits; an ill-conditioned model (KH105) is the "
        "usual reason.",
    ),
    "HP105": (
        "An error bound could not be established for the reason given; the values are still compared, but not proven.",
        "case 'settle': no error bound: the inclined support's direction is not exact in the input",
        "Read the reason; if a proof is needed, give the input exactly (e.g. directions as exact ratios).",
    ),
    "HP106": (
        "States the proof status of a case's reported results: a proven error bound and the backward error "
        "(Oettli–Prager) of the reported displacements.",
        "case 'snow': reported displacements within 2.0e-6 relative of the exact; backward error 1.1e-9",
        "Information only.",
    ),
    "HP107": (
        "The reported quantities are proven to lie within their printed rounding of the exact solution.",
        "case 'snow': all 37 reported quantities proven within their printed rounding",
        "Information only: the strongest statement the tool makes about reported values.",
    ),
    # -------------------------------------------------------------- stiffness
    "KH101": (
        "A self-check: the stiffness the tool rebuilt is not symmetric, which the assembly never allows; "
        "the tool itself is at fault.",
        "the rebuilt stiffness matrix is not symmetric: |K - Kᵀ| = 3.2e-3 at dofs (4, 7)",
        "Report it to the tool's maintainers with the model; do not trust this audit's recomputation.",
    ),
    "KH102": (
        "A self-check: the rebuilt unrestrained stiffness resists a rigid-body motion (K r ≠ 0), which a "
        "correct assembly never does.",
        "the unrestrained stiffness resists the rigid translation along x: |K r| = 1.4e2",
        "Report it to the tool's maintainers with the model.",
    ),
    "KH103": (
        "A member stiffness EA/L is zero or negative, so the stiffness is not positive semidefinite and no "
        "physical solution exists.",
        "member 6: EA/L = -2.0e4 kN/m is not positive",
        "Correct the member's E, A or end nodes.",
    ),
    "KH104": (
        "The restrained stiffness is singular to working precision although the rank shows no mechanism: "
        "the displacements are not determined by the arithmetic.",
        "the restrained stiffness is numerically singular (condition 3e17) though no mechanism was found",
        "Look for a nearly flat or nearly collinear part of the geometry, or stiffnesses of wildly different "
        "size; fix the geometry or the properties.",
    ),
    "KH105": (
        "The restrained stiffness is ill-conditioned: the condition estimate says how many digits a float64 "
        "solve may lose.",
        "the restrained stiffness is ill-conditioned (condition 4e11): up to 11 digits may be lost",
        "Compare the source's results with the high-precision recomputation (HP findings); consider "
        "stiffening the shallow part or re-scaling properties.",
    ),
    "KH106": (
        "The member stiffnesses EA/L span many orders of magnitude, which costs accuracy and often means a "
        "unit or a property entered wrongly.",
        "member stiffnesses EA/L span 1.2e-2 to 3.4e8 kN/m (ratio 3e10)",
        "Check the extreme members' E, A and lengths for a unit slip; a deliberately rigid link is better "
        "modelled as a constraint.",
    ),
    "KH107": (
        "States how positive definiteness of the restrained stiffness was established (a certified "
        "eigenvalue bound, a successful Cholesky factorisation, or not at all).",
        "positive definite: certified λ_lo = 4.1e3 (Rump 2006)",
        "Information only.",
    ),
    "KH110": (
        "The stiffness matrix the source exported is not symmetric, so it is not the stiffness of a truss.",
        "the source's stiffness matrix is not symmetric: entry (3, 8) 1.2e4, entry (8, 3) 1.3e4",
        "Check the source's export (storage order, a triangle exported twice) or its assembly.",
    ),
    "KH111": (
        "The source's stiffness matrix cannot be placed on the model's degrees of freedom, so it was not compared.",
        "the source's stiffness matrix has 14 dofs; the model has 16",
        "Export the matrix with the dof list that names each row's node and axis.",
    ),
    "KH112": (
        "The source's stiffness entries that a member contributes differ from the ones the tool rebuilt "
        "from the member's E, A and end nodes; the member is named.",
        "the source's stiffness differs from the rebuilt one as if member 9 were counted twice",
        "Check that member's properties and connectivity in the source.",
    ),
    "KH113": (
        "The source's stiffness differs at a joint where no member's contribution explains it: an extra "
        "spring or support stiffness in the source.",
        "the source's stiffness at node 'C' along x exceeds the rebuilt one by 5.0e3 kN/m",
        "Look for a spring or support stiffness the source has and the model does not (or the reverse).",
    ),
    "KH114": (
        "The source's stiffness matrix is singular or resists a rigid-body motion (e.g. supports modelled as "
        "large penalty stiffnesses), so it is not the free stiffness of the truss.",
        "the source's stiffness matrix resists rigid-body motion (penalty supports of 1e12 at 3 dofs)",
        "Export the unrestrained stiffness, or model the supports as restraints in the format.",
    ),
    "KH115": (
        "The source's stiffness matrix agrees entry by entry with the one the tool rebuilt.",
        "the source's stiffness matrix agrees with the rebuilt one (largest difference 2e-9 relative)",
        "Information only.",
    ),
    # -------------------------------------------------------------- recompute
    "RC001": (
        "Records the quantities that were not reported and so not compared with the recomputation; "
        "nothing is claimed about them.",
        "case 'heat': reactions not reported, so not checked",
        "Export them if they must be checked.",
    ),
    "RC002": (
        "The comparison used the float64 solution because no high-precision recomputation was available; "
        "the expected values are not proven.",
        "the comparison used the float64 solution: the high-precision stage did not run",
        "Usually harmless for a well-conditioned model; see the AU901 or HP finding that explains why.",
    ),
    "RC101": (
        "A reported displacement differs from the tool's recomputed value by more than the allowed "
        "difference (quantum + max(relative, floor)).",
        "node 'D' y, case 'snow': reported -3.41 mm, recomputed -3.12 mm (diff -0.29, tol 0.0031)",
        "Look for the cause in the DX findings; otherwise check the source's supports, properties and loads "
        "around that node.",
    ),
    "RC102": (
        "A reported member force differs from the tool's recomputed value by more than the allowed difference.",
        "member 3, case 'snow': reported -10.9 kN, recomputed -10.417 kN (diff -0.483, tol 0.0104)",
        "Look for the cause in the DX findings; otherwise check that member's properties and the loads.",
    ),
    "RC103": (
        "A reported reaction differs from the tool's recomputed value by more than the allowed difference.",
        "node 'C' y, case 'snow': reported 6.9 kN, recomputed 6.25 kN (diff 0.65, tol 0.006)",
        "Check the support conditions and the loads of the case in the source.",
    ),
    "RC104": (
        "A reported number agrees with the recomputation only within its own printed rounding, and that "
        "rounding is a large share of the case's scale, so it cannot be judged.",
        "node 'B' x, case 'snow': reported 0.0 mm printed to 0.1 mm, recomputed 0.04 mm",
        "Export the results with more significant digits.",
    ),
    # ----------------------------------------------------------------- source
    "SR001": (
        "Records a part of the source that the reader did not read because its contract does not name it "
        "(a table, a column, a setting, an entity); nothing in it reached the audit.",
        'members.csv: row 1, column "utilisation": not read: the tables contract names no such column here',
        "Make sure nothing the audit needs is in that part: rename the table or header to the contract's "
        "word, or say what it means in a mapping file (--map).",
    ),
    "SR002": (
        "Records how the reader interpreted the source: a column converted to the model's units, a setting "
        "taken from the file, a model picked among several; the audit ran on the interpreted values.",
        'sections.csv: column "A [mm2]": converted from mm2 to m^2 (exactly)',
        "Confirm the interpretation is what the source meant (the unit in the header, the model chosen); "
        "nothing to do when it is.",
    ),
    "SR101": (
        "The source describes more than a pin-jointed truss (rigid connections, members meant to carry "
        "bending); the audit treats it as a pin-jointed truss, so bending results are not checked.",
        "#12 IfcStructuralAnalysisModel 'Frame': rigid connections; audited as a pin-jointed truss",
        "Use the audit only if the structure is meant to act as a truss; otherwise check it with a frame "
        "analysis, which this tool does not do.",
    ),
    "SR102": (
        "Values were converted between units with a factor that has no finite decimal form (degF to degC, "
        "say), so the exact path starts from a 40-digit rounding of the converted value, not from the text.",
        'temperatures.csv: column "delta [degF]": converted from degF to degC (rounded to 40 significant digits)',
        "Usually nothing: 40 digits is far below any tolerance. To keep the exact text, give the column in "
        "the model's unit.",
    ),
    # --------------------------------------------------------------- supports
    "SP001": (
        "Records the support conditions that could not be checked because reactions or displacements were "
        "not reported.",
        "supports of case 'heat' not checked: reactions not reported",
        "Export reactions and displacements if the supports must be checked.",
    ),
    "SP101": (
        "A reaction is reported at a node that has neither a support nor a spring: the source supports the "
        "structure somewhere the model does not.",
        "node 'E', case 'snow': reaction (0.0, 4.2) kN reported, but node 'E' has no support",
        "Decide which is right and correct the source's supports or the model's.",
    ),
    "SP102": (
        "A reaction component acts along a direction the support leaves free (across a roller, along an "
        "inclined slide).",
        "node 'C', case 'snow': reaction 3.1 kN along x, which the roller leaves free",
        "Check the support's restrained directions in the source (an inclined roller entered as a pin?).",
    ),
    "SP103": (
        "The reported displacement along a restrained direction differs from its prescribed value (zero, "
        "or the settlement).",
        "node 'A' y, case 'settle': reported 0.0 mm, prescribed settlement -5.0 mm",
        "Apply the prescribed displacement in the source's case (or correct the model's).",
    ),
    "SP104": (
        "A spring's reported reaction is not −k times the reported displacement along it.",
        "node 'F' y spring k = 2.0e4 kN/m: reported reaction 11.0 kN, −k·u = 9.6 kN",
        "Check the spring stiffness and its direction in the source.",
    ),
    # -------------------------------------------------------------- stability
    "ST001": (
        "States that the rank of the equilibrium matrix with reactions shows no mechanism, the "
        "classification (determinate or with self-stress), and how the rank was proven (exact or numerical).",
        "stable and statically determinate: rank 8 proven in exact arithmetic; Maxwell count 0",
        "Information only.",
    ),
    "ST002": (
        "Names the members that can carry a state of self-stress (forces in equilibrium with no load): "
        "their forces depend on their stiffnesses and on lack of fit.",
        "1 state of self-stress in members 5, 6, 7, 8, 9, 10 (the braced panel)",
        "Information only; such members are sensitive to EA, temperature and fabrication errors.",
    ),
    "ST101": (
        "The equilibrium matrix has mechanisms: some loads cannot be carried, and linear results for this "
        "model are not valid.",
        "the model has 1 mechanism: joints C and D sway sideways together",
        "Add the member or the support that the named mechanism calls for; the other ST findings name where.",
    ),
    "ST102": (
        "The supports leave a rigid-body motion of the whole structure (or of a part) free.",
        "rigid-body rotation about node 'A' is left free by the supports",
        "Add a restraint that stops the named motion.",
    ),
    "ST103": (
        "An internal mechanism that no state of self-stress can stiffen: the structure moves finitely "
        "without stretching any member.",
        "a finite mechanism: joints E and F move together with no member stretched",
        "Add a member (usually a diagonal) across the named joints.",
    ),
    "ST104": (
        "A first-order infinitesimal mechanism: a self-stress state stiffens it to second order, so it "
        "carries load only after large displacements (or with pretension).",
        "an infinitesimal mechanism at joint G (three collinear members stiffened by self-stress)",
        "Do not rely on a linear analysis here; move the joint off the line or add a member.",
    ),
    "ST105": (
        "An internal mechanism whose order could not be proven infinitesimal, so it is treated as possibly finite.",
        "an internal mechanism at joints H and J not proven infinitesimal",
        "Treat as a mechanism: add the member that braces the named joints.",
    ),
    "ST110": (
        "All reactions are parallel, so the structure is free to translate perpendicular to them.",
        "all reactions act along y: the structure is free to translate along x",
        "Restrain one support across the others (e.g. turn a roller into a pin).",
    ),
    "ST111": (
        "All reaction lines meet in one point (or one axis in 3D), so the structure is free to rotate about it.",
        "all reaction lines pass through node 'A': a rotation about it is free",
        "Move or turn one support so that its reaction line misses that point.",
    ),
    "ST112": (
        "There are fewer reaction components than rigid-body motions (or none), so the structure cannot be held.",
        "2 reaction components for a plane truss (3 needed)",
        "Add the missing restraints.",
    ),
    "ST113": (
        "A part of the structure is joined to the rest by no member and carried by no support.",
        "nodes 'K', 'L', 'M' and members 20-22 are joined to the rest by no member",
        "Connect the part (a missing member, or node ids that should be the same node).",
    ),
    "ST114": (
        "A joint has no member at all, so nothing holds it.",
        "node 'Q' is connected to no member",
        "Remove the stray node or connect it.",
    ),
    "ST115": (
        "A joint joins only collinear members (or hangs on one member), so it is free to move across them.",
        "node 'G' joins only members 7 and 8, which are collinear",
        "Brace the joint out of the line, or merge the two members.",
    ),
    "ST116": (
        "In a space truss, all the members at a joint lie in one plane, so the joint is free to move out "
        "of that plane.",
        "node 'N': members 30, 31, 32 all lie in one plane",
        "Add a member out of that plane, or restrain the joint.",
    ),
    "ST117": (
        "A plane truss entered with three dimensions leaves every joint free to move out of its plane.",
        "all nodes lie in z = 0 and nothing restrains z: the truss is free out of its plane",
        "Enter the model with dimensions 2, or restrain the out-of-plane direction.",
    ),
    "ST118": (
        "A rectangular panel has no diagonal, so it can shear as a four-bar linkage.",
        "the panel B-C-G-F has no diagonal and can shear",
        "Add a diagonal to the named panel.",
    ),
    "ST119": (
        "Maxwell's count says there are enough members and restraints, but the rank shows the geometry is "
        "unstable anyway: members are in the wrong places.",
        "Maxwell count m + r − d·j = 0, but the rank shows 1 mechanism and 1 state of self-stress",
        "Read the mechanism and self-stress findings: move a redundant member to the unbraced panel.",
    ),
    "ST120": (
        "The numerical search for mechanisms did not finish, so the mechanism count is a lower bound and "
        "the rank an upper bound.",
        "at least 512 mechanisms (the search stopped; the rank 1,024 is an upper bound)",
        "The model is unstable whatever the exact count; fix the named mechanisms and re-run.",
    ),
}
