package kinetics

import (
	"fmt"
	"image/color"
	"sort"
)

// Role groups phases by what they do in the paste.
type Role uint8

const (
	RolePore    Role = iota // water-filled or empty capillary pore space
	RoleClinker             // reactive clinker phase inside cement grains
	RoleSulfate             // sulfate carrier, separate particles
	RoleFiller              // non-reactive particles that offer surface
	RoleHydrate             // reaction product
	RoleSCM                 // supplementary cementitious material (its reactive part)
)

var roleNames = [...]string{"pore", "clinker", "sulfate", "filler", "hydrate", "scm"}

func (r Role) String() string {
	if int(r) < len(roleNames) {
		return roleNames[r]
	}
	return fmt.Sprintf("Role(%d)", uint8(r))
}

// ID is a phase identifier stored in each voxel (one byte). Ids are
// grouped in blocks by role, with gaps inside and between the blocks so
// that phases can be added without renumbering:
//
//	0         not a phase (never written; a volume holding it is refused)
//	1–19      pore space
//	20–39     clinker phases
//	40–49     sulfate carriers
//	50–59     fillers
//	60–99     supplementary cementitious materials
//	100–199   hydration products
//	200–255   free
type ID = uint8

// Phase identifiers. They are part of the file contract (.vti, .npy,
// phases.csv): never renumber an existing one. Odd steps inside a block
// leave room for related phases (a second C-S-H, a carboaluminate beside
// each AFm).
const (
	Water         ID = 1   // water-filled capillary pore
	Empty         ID = 2   // empty capillary pore (self-desiccation)
	C3S           ID = 21  // alite
	C2S           ID = 23  // belite
	C3A           ID = 25  // aluminate
	C4AF          ID = 27  // ferrite
	Gypsum        ID = 41  // CaSO4·2H2O
	Hemihydrate   ID = 43  // CaSO4·0.5H2O
	Anhydrite     ID = 45  // CaSO4
	Calcite       ID = 51  // limestone filler, CaCO3
	Inert         ID = 53  // inert filler (quartz-like)
	CSHInner      ID = 101 // C-S-H formed inside an original grain outline
	CSHOuter      ID = 102 // C-S-H formed in the original water space
	CH            ID = 110 // portlandite
	AFt           ID = 120 // ettringite
	AFm           ID = 122 // monosulfate
	Monocarbonate ID = 124 // C4AC̄H11, calcium monocarboaluminate hydrate
	Hemicarbonate ID = 126 // C4AC̄0.5H12, calcium hemicarboaluminate hydrate
	Hydrogarnet   ID = 130 // C3AH6
	FH3           ID = 132 // iron/aluminium hydroxide (F,A)H3

	// Supplementary cementitious materials: the reactive (amorphous) part
	// of each powder; its crystalline part is Inert voxels in the same
	// particles.
	SilicaFume ID = 61 // amorphous SiO2
	FlyAsh     ID = 63 // aluminosilicate glass of a class F fly ash
	Slag       ID = 65 // ground granulated blast-furnace slag glass
	Metakaolin ID = 67 // AS2, calcined kaolinite

	CSHLowCa     ID = 104 // C1.1SH3.4, low-Ca C-S-H of the pozzolanic and slag reactions
	Stratlingite ID = 128 // C2ASH8
	Hydrotalcite ID = 134 // M4AH10
)

// NumIDs bounds every phase id: arrays indexed by ID have this length, so
// any byte read from a volume file indexes them safely.
const NumIDs = 256

// Phase describes one phase. Densities and molar masses are from Taylor,
// Cement Chemistry (1997) and Balonis & Glasser, Cem. Concr. Res. 39 (2009)
// 733, from memory (recalled, not re-read), except where a row says
// otherwise.
type Phase struct {
	ID   ID
	Key  string // config and column key: "c3s", "csh_inner"
	Name string // cement chemist notation, with the mineral name where there is one: "C3S (alite)", "C-S-H (inner)"
	Role Role

	DensityGPerCM3   float64 // 0 for pores
	MolarMassGPerMol float64 // 0 for pores

	// BoundWaterMol is the moles of H2O per mole of the phase that remain
	// after D-drying (non-evaporable water). Used for hydrates only.
	BoundWaterMol float64

	// MeanZ is the mass-weighted mean atomic number of the phase's formula,
	// for hydrates with their water (Fe(OH)3, not Fe2O3), which sets the grey
	// level of the phase in a backscattered-electron-like image.
	MeanZ float64

	Colour color.RGBA // categorical colour for slice images
}

// MolarVolumeCM3 returns M/ρ in cm³/mol, or 0 for pores.
func (p *Phase) MolarVolumeCM3() float64 {
	if p.DensityGPerCM3 == 0 {
		return 0
	}
	return p.MolarMassGPerMol / p.DensityGPerCM3
}

// IsPore, IsAnhydrous and IsHydrate classify a phase id by its range.
func IsPore(id ID) bool      { return id >= 1 && id < 20 }
func IsAnhydrous(id ID) bool { return id >= 20 && id < 100 }
func IsHydrate(id ID) bool   { return id >= 100 && id < 200 }
func IsSolid(id ID) bool     { return id >= 20 && id < 200 }

// WaterDensity is the density of pore water in g/cm³ at 20 °C.
const WaterDensity = 0.998

// WaterMolarMass is the molar mass of H2O in g/mol.
const WaterMolarMass = 18.015

// phases is the table. Colours are gelspace's own palette, one hue family
// per id block: pores very dark, clinker reds and magentas (C3S a strong
// red), sulfates yellows, fillers greys, SCMs blues and violets, hydrates
// greens through teals (CH a green). The render package documents the
// families and checks the distances, together with the colours it holds
// for the phases still to come.
var phases = []Phase{
	{ID: Water, Key: "water", Name: "water-filled capillary pore", Role: RolePore, MeanZ: 7.22,
		Colour: color.RGBA{0x0f, 0x11, 0x44, 0xff}},
	{ID: Empty, Key: "empty", Name: "empty capillary pore (self-desiccation)", Role: RolePore, MeanZ: 0,
		Colour: color.RGBA{0x0a, 0x00, 0x00, 0xff}},

	// C3S 3CaO·SiO2; the MeanZ figures are computed from the formulas.
	{ID: C3S, Key: "c3s", Name: "C3S (alite)", Role: RoleClinker, DensityGPerCM3: 3.15, MolarMassGPerMol: 228.32, MeanZ: 15.06,
		Colour: color.RGBA{0xdc, 0x24, 0x43, 0xff}},
	{ID: C2S, Key: "c2s", Name: "C2S (belite)", Role: RoleClinker, DensityGPerCM3: 3.28, MolarMassGPerMol: 172.24, MeanZ: 14.56,
		Colour: color.RGBA{0xff, 0x87, 0xd0, 0xff}},
	{ID: C3A, Key: "c3a", Name: "C3A (aluminate)", Role: RoleClinker, DensityGPerCM3: 3.03, MolarMassGPerMol: 270.19, MeanZ: 14.34,
		Colour: color.RGBA{0xa9, 0x03, 0x7c, 0xff}},
	{ID: C4AF, Key: "c4af", Name: "C4AF (ferrite)", Role: RoleClinker, DensityGPerCM3: 3.73, MolarMassGPerMol: 485.96, MeanZ: 16.65,
		Colour: color.RGBA{0x53, 0x01, 0x31, 0xff}},
	{ID: Gypsum, Key: "gypsum", Name: "gypsum", Role: RoleSulfate, DensityGPerCM3: 2.32, MolarMassGPerMol: 172.17, MeanZ: 12.12,
		Colour: color.RGBA{0xf0, 0xe3, 0xa8, 0xff}},
	{ID: Hemihydrate, Key: "hemihydrate", Name: "hemihydrate", Role: RoleSulfate, DensityGPerCM3: 2.74, MolarMassGPerMol: 145.15, MeanZ: 13.03,
		Colour: color.RGBA{0xef, 0xdd, 0x55, 0xff}},
	{ID: Anhydrite, Key: "anhydrite", Name: "anhydrite", Role: RoleSulfate, DensityGPerCM3: 2.97, MolarMassGPerMol: 136.14, MeanZ: 13.42,
		Colour: color.RGBA{0xa8, 0x9a, 0x37, 0xff}},
	{ID: Calcite, Key: "calcite", Name: "limestone (CaCO3)", Role: RoleFiller, DensityGPerCM3: 2.71, MolarMassGPerMol: 100.09, MeanZ: 12.56,
		Colour: color.RGBA{0x7e, 0x71, 0x75, 0xff}},
	{ID: Inert, Key: "inert", Name: "inert filler", Role: RoleFiller, DensityGPerCM3: 2.65, MolarMassGPerMol: 60.08, MeanZ: 10.80,
		Colour: color.RGBA{0xe3, 0xea, 0xf5, 0xff}},

	// C-S-H as C1.7SH4 (saturated, gel water included); D-dry C1.7SH1.4.
	// The recalled figures are ρ 2.12 g/cm³ and Vm ≈ 108 cm³/mol, which differ
	// by their rounding (227.5/2.12 = 107.3); the density here, 2.106, keeps
	// the tabled molar volume of 108 cm³/mol, which is what the volume
	// stoichiometry uses.
	{ID: CSHInner, Key: "csh_inner", Name: "C-S-H (inner)", Role: RoleHydrate, DensityGPerCM3: 2.106, MolarMassGPerMol: 227.5, BoundWaterMol: 1.4, MeanZ: 12.09,
		Colour: color.RGBA{0x1f, 0x7c, 0x4c, 0xff}},
	{ID: CSHOuter, Key: "csh_outer", Name: "C-S-H (outer)", Role: RoleHydrate, DensityGPerCM3: 2.106, MolarMassGPerMol: 227.5, BoundWaterMol: 1.4, MeanZ: 12.09,
		Colour: color.RGBA{0x80, 0xc0, 0x70, 0xff}},
	{ID: CH, Key: "ch", Name: "CH (portlandite)", Role: RoleHydrate, DensityGPerCM3: 2.24, MolarMassGPerMol: 74.09, BoundWaterMol: 1, MeanZ: 14.3,
		Colour: color.RGBA{0xcc, 0xff, 0x8d, 0xff}},
	// Ettringite keeps about 10 of its 32 H2O on D-drying (memory).
	{ID: AFt, Key: "aft", Name: "AFt (ettringite)", Role: RoleHydrate, DensityGPerCM3: 1.78, MolarMassGPerMol: 1255.1, BoundWaterMol: 10, MeanZ: 10.77,
		Colour: color.RGBA{0x17, 0xa0, 0xab, 0xff}},
	{ID: AFm, Key: "afm", Name: "AFm (monosulfate)", Role: RoleHydrate, DensityGPerCM3: 2.01, MolarMassGPerMol: 622.5, BoundWaterMol: 8, MeanZ: 11.66,
		Colour: color.RGBA{0x00, 0xdf, 0xff, 0xff}},
	// Carboaluminates (AFm): molar volumes from Cemdata18 (Lothenbach et
	// al., Cem. Concr. Res. 115 (2019) 472, as transcribed in a public
	// thermodynamic data file): C4AC̄H11 262 cm³/mol, C4AC̄0.5H12
	// 285 cm³/mol; molar masses from the formulas (CaO 56.077, Al2O3 101.96,
	// CO2 44.01, H2O 18.015); densities M/Vm. Bound water on D-drying about
	// 6 H2O for both (from memory, rough). MeanZ from the formulas.
	{ID: Monocarbonate, Key: "monocarbonate", Name: "monocarbonate (Mc)", Role: RoleHydrate, DensityGPerCM3: 568.44 / 262, MolarMassGPerMol: 568.44, BoundWaterMol: 6, MeanZ: 11.54,
		Colour: color.RGBA{0x76, 0xc1, 0x00, 0xff}},
	{ID: Hemicarbonate, Key: "hemicarbonate", Name: "hemicarbonate (Hc)", Role: RoleHydrate, DensityGPerCM3: 564.45 / 285, MolarMassGPerMol: 564.45, BoundWaterMol: 6, MeanZ: 11.56,
		Colour: color.RGBA{0xc6, 0xfe, 0xda, 0xff}},
	{ID: Hydrogarnet, Key: "hydrogarnet", Name: "hydrogarnet (C3AH6)", Role: RoleHydrate, DensityGPerCM3: 2.52, MolarMassGPerMol: 378.3, BoundWaterMol: 6, MeanZ: 12.30,
		Colour: color.RGBA{0x00, 0x43, 0x56, 0xff}},
	// FH3 is the iron end of the (F,A)H3 hydroxide: the reactions send the
	// Al of the ferrite into AFt, AFm or hydrogarnet and its Fe here, so the
	// phase is Fe2O3·3H2O = 2 Fe(OH)3 (M = 2 × 106.87 = 213.7 g/mol), which
	// keeps the reactions balanced by mass. Its molar volume is that of
	// microcrystalline Fe(OH)3 in Cemdata18 (Lothenbach et al., Cem. Concr.
	// Res. 115 (2019) 472), 34.36 cm³/mol per Fe(OH)3 — from memory, the
	// table could not be read here — so Vm = 68.72 cm³/mol and
	// ρ = 213.7/68.72 = 3.11 g/cm³. (The Al end, microcrystalline Al(OH)3,
	// 32.22 cm³/mol and 2.42 g/cm³ in the same dataset, also from memory, is
	// not a phase here.) Mean Z is that of Fe(OH)3 with its water, 17.21:
	// iron-rich, it stays above ferrite's 16.65, so in the BSE-like grey it
	// is no darker than ferrite; its name says what it is.
	{ID: FH3, Key: "fh3", Name: "FH3 (iron hydroxide)", Role: RoleHydrate, DensityGPerCM3: 3.11, MolarMassGPerMol: 213.7, BoundWaterMol: 3, MeanZ: 17.21,
		Colour: color.RGBA{0x05, 0x39, 0x0e, 0xff}},
	// Supplementary cementitious materials. Each is represented by the
	// reactive glass (or amorphous solid) of a typical powder of its kind,
	// with a fixed formula per mole of Si so that its reaction balances:
	//   - silica fume: amorphous SiO2, ρ 2.20 g/cm³ (common practice:
	//     2.2–2.3 g/cm³).
	//   - fly ash (class F) glass: SA0.25C0.1 per Si — an aluminosilicate
	//     glass with Al/Si 0.5 and a little lime, typical of low-calcium
	//     fly ash glass (SiO2 about 66, Al2O3 28, CaO 6 mass %; common
	//     practice, from memory); ρ 2.40 g/cm³ (glass of fly ash 2.3–2.5,
	//     from memory).
	//   - slag: C1.2SA0.16M0.4 per Si — CaO 42, SiO2 38, Al2O3 10, MgO 10
	//     mass %, the typical make-up of a ground granulated blast-furnace
	//     slag (common practice); ρ 2.90 g/cm³ (common practice 2.85–2.95).
	//   - metakaolin: Al2O3·2SiO2 (AS2), ρ 2.50 g/cm³ (from memory,
	//     2.5–2.6).
	// Molar masses from the formulas (CaO 56.077, SiO2 60.084, Al2O3
	// 101.96, MgO 40.304); MeanZ from the formulas.
	{ID: SilicaFume, Key: "silica_fume", Name: "silica fume (amorphous SiO2)", Role: RoleSCM, DensityGPerCM3: 2.20, MolarMassGPerMol: 60.08, MeanZ: 10.80,
		Colour: color.RGBA{0x6f, 0x09, 0x8e, 0xff}},
	{ID: FlyAsh, Key: "fly_ash", Name: "fly ash glass (SA0.25C0.1)", Role: RoleSCM, DensityGPerCM3: 2.40, MolarMassGPerMol: 91.18, MeanZ: 11.12,
		Colour: color.RGBA{0xc1, 0x73, 0xdd, 0xff}},
	{ID: Slag, Key: "slag", Name: "slag glass (C1.2SA0.16M0.4)", Role: RoleSCM, DensityGPerCM3: 2.90, MolarMassGPerMol: 159.81, MeanZ: 13.18,
		Colour: color.RGBA{0xcc, 0x41, 0xff, 0xff}},
	{ID: Metakaolin, Key: "metakaolin", Name: "metakaolin (AS2)", Role: RoleSCM, DensityGPerCM3: 2.50, MolarMassGPerMol: 222.13, MeanZ: 10.73,
		Colour: color.RGBA{0x2c, 0x02, 0xf7, 0xff}},

	// Low-Ca C-S-H of the pozzolanic and slag reactions, C1.1SH3.4: Ca/Si
	// 1.1, near what is measured in pastes rich in silica fume or slag
	// (Richardson, Cem. Concr. Res. 29 (1999) 1131, from memory), with
	// the water that keeps the clinker C-S-H's H − C (4 − 1.7 = 2.3; an
	// assumption). Its molar volume takes the clinker C-S-H's 108 cm³/mol
	// less 0.6 mol of CH (33.1 cm³/mol), 88 cm³/mol, by additivity of
	// molar volumes (an assumption): ρ = 183.02/88 = 2.08 g/cm³, inside
	// the 1.9–2.1 g/cm³ of saturated C-S-H (common practice). D-dry water
	// about 1.1 H2O (assumption, scaled from the clinker C-S-H).
	{ID: CSHLowCa, Key: "csh_low_ca", Name: "C-S-H (low Ca/Si, pozzolanic)", Role: RoleHydrate, DensityGPerCM3: 183.02 / 88, MolarMassGPerMol: 183.02, BoundWaterMol: 1.1, MeanZ: 11.55,
		Colour: color.RGBA{0x5a, 0xb9, 0x99, 0xff}},
	// Strätlingite C2ASH8 (M 418.32 g/mol), Vm 216.1 cm³/mol from
	// Cemdata18 (Lothenbach et al., Cem. Concr. Res. 115 (2019) 472; from
	// memory): ρ 1.94 g/cm³ (published 1.94, from memory). Bound water on
	// D-drying about 4 H2O (from memory, rough).
	{ID: Stratlingite, Key: "stratlingite", Name: "strätlingite (C2ASH8)", Role: RoleHydrate, DensityGPerCM3: 418.32 / 216.1, MolarMassGPerMol: 418.32, BoundWaterMol: 4, MeanZ: 11.08,
		Colour: color.RGBA{0x9d, 0xff, 0x00, 0xff}},
	// Hydrotalcite M4AH10, Mg4Al2(OH)14·3H2O (M 443.33 g/mol), Vm about
	// 220 cm³/mol (Cemdata18, from memory): ρ 2.02 g/cm³ (published about
	// 2.0, from memory). D-dry water about 7 H2O (the hydroxyl water stays;
	// an estimate).
	{ID: Hydrotalcite, Key: "hydrotalcite", Name: "hydrotalcite (M4AH10)", Role: RoleHydrate, DensityGPerCM3: 443.33 / 220, MolarMassGPerMol: 443.33, BoundWaterMol: 7, MeanZ: 9.17,
		Colour: color.RGBA{0x00, 0x66, 0x00, 0xff}},
}

var byID [NumIDs]*Phase
var byKey = map[string]*Phase{}

func init() {
	sort.SliceStable(phases, func(i, j int) bool { return phases[i].ID < phases[j].ID })
	for i := range phases {
		p := &phases[i]
		if byID[p.ID] != nil {
			panic(fmt.Sprintf("kinetics: duplicate phase id %d", p.ID))
		}
		byID[p.ID] = p
		byKey[p.Key] = p
	}
}

// Phases returns the phase table in id order. The slice is shared: do not
// modify it.
func Phases() []Phase { return phases }

// Lookup returns the phase with the given id, or nil.
func Lookup(id ID) *Phase {
	if int(id) >= NumIDs {
		return nil
	}
	return byID[id]
}

// ByKey returns the phase with the given key ("c3s"), or nil.
func ByKey(key string) *Phase { return byKey[key] }

// Keys returns the keys of the phases with the given roles, in id order.
func Keys(roles ...Role) []string {
	var out []string
	for i := range phases {
		for _, r := range roles {
			if phases[i].Role == r {
				out = append(out, phases[i].Key)
				break
			}
		}
	}
	return out
}
