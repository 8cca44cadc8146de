package kinetics

// Term is one species of a reaction: a phase and its moles per mole of
// reaction. Phase Water stands for H2O.
type Term struct {
	Phase ID
	Mol   float64
}

// Reaction is a hydration reaction in cement chemist notation. A reaction
// runs when one voxel of its Primary phase dissolves; the co-reactants are
// taken from the dissolved pools of the solution, and the products leave as
// dissolved units that precipitate where the growth rules allow.
//
// Stoichiometries are the textbook forms (Taylor 1997; Mindess & Young)
// recalled; each one balances by mass, which a test
// checks with the phase table's molar masses.
type Reaction struct {
	Key        string
	Formula    string
	Primary    ID      // phase whose voxel drives the reaction
	PrimaryMol float64 // moles of Primary per mole of reaction
	Co         []Term  // solid co-reactants drawn from the solution pools
	WaterMol   float64 // moles of H2O consumed per mole of reaction
	Products   []Term
	// HeatJPerG is the heat released per gram of Primary. Sources:
	//   - C3S 517, C2S 262, C3A → AFt 1670, C3A → C3AH6 866, C4AF 418:
	//     Lerch & Bogue values as given by Taylor, Cement Chemistry 1997
	//     (from memory).
	//   - AFt → AFm, 881 J/g of C3A: by Hess's law from the same table's
	//     C3A → AFt (1670 J/g) and C3A + gypsum → monosulfate (1144 J/g):
	//     3 × 1144 − 1670 = 2 × 881 (per gram of C3A), so the three heats
	//     are consistent.
	//   - C3A → monocarbonate 1157 J/g: from standard formation
	//     enthalpies, ΔfH°(C4AC̄H10.7) = −8166.4 kJ/mol (measured by
	//     solution calorimetry, Cem. Concr. Res. 2018, doi
	//     10.1016/j.cemconres.2018.10.012), C3A −3588.6, calcite −1206.9,
	//     liquid water −285.83 kJ/mol (compiled standard values): 312.5 kJ
	//     per mol of C3A; the 0.3 H2O more of C4AC̄H11 is taken at the heat
	//     of liquid water. Hemicarbonate is given the same heat per gram of
	//     C3A (no figure read; an assumption).
	//   - hemihydrate and anhydrite from their heats of conversion to
	//     gypsum, about 17 kJ/mol (from memory).
	HeatJPerG float64
}

// Reaction keys.
const (
	RxC3S         = "c3s"
	RxC2S         = "c2s"
	RxC3AAFt      = "c3a_aft"
	RxC3AAFm      = "c3a_afm"
	RxC3AHG       = "c3a_hydrogarnet"
	RxC4AFAFt     = "c4af_aft"
	RxC4AFAFm     = "c4af_afm"
	RxC4AFHG      = "c4af_hydrogarnet"
	RxC3AMc       = "c3a_monocarbonate"
	RxC3AHc       = "c3a_hemicarbonate"
	RxC4AFMc      = "c4af_monocarbonate"
	RxHemihydrate = "hemihydrate"
	RxAnhydrite   = "anhydrite"
	RxSilicaFume  = "silica_fume"
	RxFlyAsh      = "fly_ash"
	RxSlag        = "slag"
	RxMetakaolin  = "metakaolin"
)

var reactions = []Reaction{
	{Key: RxC3S, Formula: "C3S + 5.3H → C1.7SH4 + 1.3CH", Primary: C3S, PrimaryMol: 1, WaterMol: 5.3,
		Products: []Term{{CSHOuter, 1}, {CH, 1.3}}, HeatJPerG: 517},
	{Key: RxC2S, Formula: "C2S + 4.3H → C1.7SH4 + 0.3CH", Primary: C2S, PrimaryMol: 1, WaterMol: 4.3,
		Products: []Term{{CSHOuter, 1}, {CH, 0.3}}, HeatJPerG: 262},
	{Key: RxC3AAFt, Formula: "C3A + 3CS̄H2 + 26H → C6AS̄3H32", Primary: C3A, PrimaryMol: 1, Co: []Term{{Gypsum, 3}}, WaterMol: 26,
		Products: []Term{{AFt, 1}}, HeatJPerG: 1670},
	{Key: RxC3AAFm, Formula: "2C3A + C6AS̄3H32 + 4H → 3C4AS̄H12", Primary: C3A, PrimaryMol: 2, Co: []Term{{AFt, 1}}, WaterMol: 4,
		Products: []Term{{AFm, 3}}, HeatJPerG: 881},
	{Key: RxC3AMc, Formula: "C3A + CC̄ + 11H → C4AC̄H11", Primary: C3A, PrimaryMol: 1, Co: []Term{{Calcite, 1}}, WaterMol: 11,
		Products: []Term{{Monocarbonate, 1}}, HeatJPerG: 1157},
	{Key: RxC3AHc, Formula: "C3A + 0.5CC̄ + 0.5CH + 11.5H → C4AC̄0.5H12", Primary: C3A, PrimaryMol: 1, Co: []Term{{Calcite, 0.5}, {CH, 0.5}}, WaterMol: 11.5,
		Products: []Term{{Hemicarbonate, 1}}, HeatJPerG: 1157},
	{Key: RxC3AHG, Formula: "C3A + 6H → C3AH6", Primary: C3A, PrimaryMol: 1, WaterMol: 6,
		Products: []Term{{Hydrogarnet, 1}}, HeatJPerG: 866},
	{Key: RxC4AFAFt, Formula: "C4AF + 3CS̄H2 + 30H → C6(A,F)S̄3H32 + CH + FH3", Primary: C4AF, PrimaryMol: 1, Co: []Term{{Gypsum, 3}}, WaterMol: 30,
		Products: []Term{{AFt, 1}, {CH, 1}, {FH3, 1}}, HeatJPerG: 418},
	{Key: RxC4AFAFm, Formula: "2C4AF + C6AS̄3H32 + 12H → 3C4AS̄H12 + 2CH + 2FH3", Primary: C4AF, PrimaryMol: 2, Co: []Term{{AFt, 1}}, WaterMol: 12,
		Products: []Term{{AFm, 3}, {CH, 2}, {FH3, 2}}, HeatJPerG: 418},
	{Key: RxC4AFMc, Formula: "C4AF + CC̄ + 15H → C4AC̄H11 + CH + FH3", Primary: C4AF, PrimaryMol: 1, Co: []Term{{Calcite, 1}}, WaterMol: 15,
		Products: []Term{{Monocarbonate, 1}, {CH, 1}, {FH3, 1}}, HeatJPerG: 418},
	{Key: RxC4AFHG, Formula: "C4AF + 10H → C3AH6 + CH + FH3", Primary: C4AF, PrimaryMol: 1, WaterMol: 10,
		Products: []Term{{Hydrogarnet, 1}, {CH, 1}, {FH3, 1}}, HeatJPerG: 418},
	{Key: RxHemihydrate, Formula: "CS̄H0.5 + 1.5H → CS̄H2 (dissolved)", Primary: Hemihydrate, PrimaryMol: 1, WaterMol: 1.5,
		Products: []Term{{Gypsum, 1}}, HeatJPerG: 117},
	{Key: RxAnhydrite, Formula: "CS̄ + 2H → CS̄H2 (dissolved)", Primary: Anhydrite, PrimaryMol: 1, WaterMol: 2,
		Products: []Term{{Gypsum, 1}}, HeatJPerG: 124},

	// Supplementary cementitious materials. Pozzolanic reactions take CH
	// from the solution as a co-reactant (Papadakis, Cem. Concr. Res. 29
	// (1999) 79 for silica fume and Cem. Concr. Res. 30 (2000) 1647 for
	// fly ash write the reaction of the active silica with CH to C-S-H;
	// gelspace writes it with the low-Ca C-S-H of the phase table), and
	// stop where no CH can be had. Alumina goes to strätlingite, the
	// aluminous hydrate of CH-poor blends (metakaolin: Murat, Cem. Concr.
	// Res. 13 (1983) 259, from memory). Slag reacts by itself once
	// activated, to low-Ca C-S-H, a hydrotalcite-like phase for its MgO
	// (Chen & Brouwers, J. Mater. Sci. 42 (2007) 428, from memory) and
	// strätlingite for the rest of its alumina, leaving a little CH.
	// Heats, J per g of the reactive part:
	//   - silica fume 780 (from memory, rough: published estimates of the
	//     pozzolanic heat of silica fume lie near 700–900 J/g);
	//   - fly ash glass 514: the silica-fume figure scaled by the glass's
	//     silica (60.08/91.18 g/g; an assumption, no figure read);
	//   - slag 461 (Schindler & Folliard, ACI Mater. J. 102 (2005) 24,
	//     from memory);
	//   - metakaolin 800 (from memory, rough).
	{Key: RxSilicaFume, Formula: "S + 1.1CH + 2.3H → C1.1SH3.4", Primary: SilicaFume, PrimaryMol: 1, Co: []Term{{CH, 1.1}}, WaterMol: 2.3,
		Products: []Term{{CSHLowCa, 1}}, HeatJPerG: 780},
	{Key: RxFlyAsh, Formula: "SA0.25C0.1 + 1.225CH + 3.325H → 0.75C1.1SH3.4 + 0.25C2ASH8", Primary: FlyAsh, PrimaryMol: 1, Co: []Term{{CH, 1.225}}, WaterMol: 3.325,
		Products: []Term{{CSHLowCa, 0.75}, {Stratlingite, 0.25}}, HeatJPerG: 514},
	{Key: RxSlag, Formula: "C1.2SA0.16M0.4 + 4.722H → 0.94C1.1SH3.4 + 0.06C2ASH8 + 0.1M4AH10 + 0.046CH", Primary: Slag, PrimaryMol: 1, WaterMol: 4.722,
		Products: []Term{{CSHLowCa, 0.94}, {Stratlingite, 0.06}, {Hydrotalcite, 0.1}, {CH, 0.046}}, HeatJPerG: 461},
	{Key: RxMetakaolin, Formula: "AS2 + 3.1CH + 8.3H → C2ASH8 + C1.1SH3.4", Primary: Metakaolin, PrimaryMol: 1, Co: []Term{{CH, 3.1}}, WaterMol: 8.3,
		Products: []Term{{Stratlingite, 1}, {CSHLowCa, 1}}, HeatJPerG: 800},
}

// PrimaryReaction returns the key of the one reaction a phase without a
// sequence runs when a voxel of it dissolves, or "".
func PrimaryReaction(id ID) string {
	if aluminateSequences[id] != nil {
		return ""
	}
	for i := range reactions {
		if r := &reactions[i]; r.Primary == id {
			return r.Key
		}
	}
	return ""
}

// aluminateSequences lists, for each aluminate phase, its reactions in the
// order the pore solution allows them: the first whose co-reactants the
// solution can supply runs. Ettringite while sulfate lasts; then, with
// calcite, the carboaluminates, which leave ettringite stable (Matschei,
// Lothenbach & Glasser, Cem. Concr. Res. 37 (2007); Lothenbach et al.,
// Cem. Concr. Res. 38 (2008), from memory) — monocarbonate, and
// hemicarbonate where the calcite at hand covers only half; without
// calcite, monosulfate from ettringite; hydrogarnet when neither is left.
var aluminateSequences = map[ID][]string{
	C3A:  {RxC3AAFt, RxC3AMc, RxC3AHc, RxC3AAFm, RxC3AHG},
	C4AF: {RxC4AFAFt, RxC4AFMc, RxC4AFAFm, RxC4AFHG},
}

// Sequence returns the reactions of a phase in order of preference (see
// aluminateSequences), or nil for a phase with one reaction.
func Sequence(id ID) []string { return aluminateSequences[id] }

// Reactions returns the reaction table. The slice is shared: do not modify.
func Reactions() []Reaction { return reactions }

// ReactionByKey returns the reaction with the given key, or nil.
func ReactionByKey(key string) *Reaction {
	for i := range reactions {
		if reactions[i].Key == key {
			return &reactions[i]
		}
	}
	return nil
}

// VoxelsPerVoxel returns, for a reaction driven by one voxel of its Primary,
// the voxels of phase id produced (positive) or consumed (negative, for
// co-reactants), from the molar volumes. Water is returned in voxels of
// liquid water.
func (r *Reaction) VoxelsPerVoxel(id ID) float64 {
	vp := r.PrimaryMol * Lookup(r.Primary).MolarVolumeCM3()
	var v float64
	if id == Water {
		return r.WaterMol * WaterMolarMass / WaterDensity / vp
	}
	for _, t := range r.Products {
		if t.Phase == id {
			v += t.Mol * Lookup(id).MolarVolumeCM3()
		}
	}
	for _, t := range r.Co {
		if t.Phase == id {
			v -= t.Mol * Lookup(id).MolarVolumeCM3()
		}
	}
	return v / vp
}

// ChemicalShrinkage returns the volume lost per volume of Primary reacted:
// reactants (primary, co-reactants, water) less products.
func (r *Reaction) ChemicalShrinkage() float64 {
	s := 1 + r.VoxelsPerVoxel(Water)
	for _, t := range r.Co {
		s -= r.VoxelsPerVoxel(t.Phase)
	}
	for _, t := range r.Products {
		s -= r.VoxelsPerVoxel(t.Phase)
	}
	return s
}
