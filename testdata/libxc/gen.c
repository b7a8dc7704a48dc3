/*
 * Generate testdata/libxc/kernels.json: exchange-correlation kernel values
 * (exc, vrho, vsigma) from libxc at a fixed table of density points, for the
 * LDA/GGA pieces our engine implements, plus the composition of the hybrids
 * B3LYP, B3LYP5 and PBE0 as libxc defines them.
 *
 * Build and run with gen.sh (gcc gen.c -lxc -lm). CI never runs this; Go tests
 * only read kernels.json.
 *
 * Conventions (libxc): exc is the energy PER PARTICLE, so the energy density is
 * rho_total * exc. vrho = d(rho*exc)/d rho_s, vsigma = d(rho*exc)/d sigma_xx,
 * with sigma_aa = grad rho_a . grad rho_a, sigma_ab = grad rho_a . grad rho_b,
 * sigma_bb = grad rho_b . grad rho_b (unpolarised: sigma = |grad rho|^2 of the
 * total density). All in Hartree atomic units.
 */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <xc.h>

static const struct { int id; const char *key; } FUNCS[] = {
  {XC_LDA_X, "lda_x"},
  {XC_LDA_C_VWN, "lda_c_vwn"},
  {XC_LDA_C_VWN_RPA, "lda_c_vwn_rpa"},
  {XC_GGA_X_B88, "gga_x_b88"},
  {XC_GGA_C_LYP, "gga_c_lyp"},
  {XC_GGA_X_PBE, "gga_x_pbe"},
  {XC_GGA_C_PBE, "gga_c_pbe"},
};
#define NFUNCS (sizeof(FUNCS) / sizeof(FUNCS[0]))

static const struct { int id; const char *key; } HYBRIDS[] = {
  {XC_HYB_GGA_XC_B3LYP, "hyb_gga_xc_b3lyp"},
  {XC_HYB_GGA_XC_B3LYP5, "hyb_gga_xc_b3lyp5"},
  {XC_HYB_GGA_XC_PBEH, "hyb_gga_xc_pbeh"},
};
#define NHYB (sizeof(HYBRIDS) / sizeof(HYBRIDS[0]))

/* unpolarised points: total density rho and reduced gradient
   s = |grad rho| / (2 (3 pi^2)^(1/3) rho^(4/3)); sigma = |grad rho|^2 */
static const double UNPOL_RHO_S[][2] = {
  {1e-6, 0.0}, {1e-6, 1.0}, {1e-5, 0.5}, {1e-4, 2.0}, {1e-3, 0.0},
  {1e-3, 1.5}, {5e-3, 5.0}, {1e-2, 0.3}, {3e-2, 1.0}, {0.1, 0.0},
  {0.1, 0.8}, {0.1, 3.0}, {0.3, 0.2}, {1.0, 0.0}, {1.0, 0.5},
  {1.0, 2.5}, {10.0, 0.1}, {10.0, 1.0}, {100.0, 0.4}, {1000.0, 0.05},
};
#define NUNPOL (sizeof(UNPOL_RHO_S) / sizeof(UNPOL_RHO_S[0]))

/* polarised points: rho_a, rho_b, s_a, s_b, c with
   sigma_ss = (2 (6 pi^2)^(1/3) rho_s^(4/3) s_s)^2 (spin-scaled reduced gradient),
   sigma_ab = c * sqrt(sigma_aa sigma_bb), |c| <= 1 */
static const double POL[][5] = {
  {5e-7, 5e-7, 0.0, 0.0, 0.0},
  {8e-7, 2e-7, 1.0, 0.5, 0.3},
  {1e-5, 1e-5, 0.5, 0.5, 1.0},
  {1e-4, 5e-5, 2.0, 1.0, -0.5},
  {1e-3, 1e-3, 0.0, 0.0, 0.0},
  {1e-3, 2e-4, 1.5, 0.8, 0.7},
  {5e-3, 1e-3, 3.0, 4.0, 0.1},
  {1e-2, 1e-2, 0.3, 0.3, 1.0},
  {3e-2, 1e-2, 1.0, 0.6, 0.2},
  {0.05, 0.05, 0.0, 0.0, 0.0},
  {0.1, 0.02, 0.8, 1.2, -0.3},
  {0.1, 0.1, 3.0, 3.0, 0.9},
  {0.3, 0.1, 0.2, 0.4, 0.5},
  {0.5, 0.5, 0.0, 0.0, 0.0},
  {1.0, 0.3, 0.5, 0.7, 0.6},
  {1.0, 1.0, 2.5, 2.5, -1.0},
  {5.0, 5.0, 0.1, 0.1, 1.0},
  {8.0, 2.0, 1.0, 0.5, 0.4},
  {60.0, 40.0, 0.4, 0.3, 0.8},
  {0.2, 0.0, 0.5, 0.0, 0.0}, /* fully polarised (rho_b = 0) */
};
#define NPOL (sizeof(POL) / sizeof(POL[0]))

static void pr(const char *s) { fputs(s, stdout); }

static void json_str(const char *s) {
  putchar('"');
  for (; s && *s; s++) {
    if (*s == '"' || *s == '\\') { putchar('\\'); putchar(*s); }
    else if (*s == '\n') pr("\\n");
    else putchar(*s);
  }
  putchar('"');
}

static void json_arr(const double *v, int n) {
  putchar('[');
  for (int i = 0; i < n; i++) printf("%s%.17g", i ? ", " : "", v[i]);
  putchar(']');
}

static void print_info(const xc_func_type *f, int id) {
  const xc_func_info_type *info = f->info;
  printf("\"libxc_id\": %d, \"libxc_name\": ", id);
  json_str(xc_functional_get_name(id));
  pr(", \"description\": ");
  json_str(info->name);
  printf(", \"family\": \"%s\"", info->family == XC_FAMILY_LDA ? "lda" :
         info->family == XC_FAMILY_GGA ? "gga" :
         info->family == XC_FAMILY_HYB_GGA ? "hyb_gga" : "other");
  printf(", \"kind\": \"%s\"", info->kind == XC_EXCHANGE ? "exchange" :
         info->kind == XC_CORRELATION ? "correlation" : "exchange_correlation");
  pr(", \"references\": [");
  for (int i = 0; i < XC_MAX_REFERENCES && info->refs[i] != NULL; i++) {
    pr(i ? ", {\"ref\": " : "{\"ref\": ");
    json_str(info->refs[i]->ref);
    pr(", \"doi\": ");
    json_str(info->refs[i]->doi);
    pr("}");
  }
  pr("]");
  int np = info->ext_params.n;
  if (np > 0) {
    pr(", \"parameters\": {");
    for (int i = 0; i < np; i++) {
      if (i) pr(", ");
      json_str(info->ext_params.names[i]);
      printf(": %.17g", info->ext_params.values[i]);
    }
    pr("}");
  }
  printf(", \"dens_threshold\": %.17g, \"zeta_threshold\": %.17g, \"sigma_threshold\": %.17g",
         f->dens_threshold, f->zeta_threshold, f->sigma_threshold);
}

int main(void) {
  const double pi = M_PI;
  const double cu = 2.0 * cbrt(3.0 * pi * pi); /* unpolarised s prefactor */
  const double cp = 2.0 * cbrt(6.0 * pi * pi); /* spin-scaled s prefactor */
  double rho_u[NUNPOL], sig_u[NUNPOL];
  double rho_p[2 * NPOL], sig_p[3 * NPOL];

  for (size_t i = 0; i < NUNPOL; i++) {
    double r = UNPOL_RHO_S[i][0], s = UNPOL_RHO_S[i][1];
    double g = cu * pow(r, 4.0 / 3.0) * s;
    rho_u[i] = r;
    sig_u[i] = g * g;
  }
  for (size_t i = 0; i < NPOL; i++) {
    double ra = POL[i][0], rb = POL[i][1];
    double ga = cp * pow(ra, 4.0 / 3.0) * POL[i][2];
    double gb = cp * pow(rb, 4.0 / 3.0) * POL[i][3];
    rho_p[2 * i] = ra;
    rho_p[2 * i + 1] = rb;
    sig_p[3 * i] = ga * ga;
    sig_p[3 * i + 1] = POL[i][4] * ga * gb;
    sig_p[3 * i + 2] = gb * gb;
  }

  pr("{\n \"generator\": \"testdata/libxc/gen.c (run by testdata/libxc/gen.sh)\",\n");
  pr(" \"libxc_version\": ");
  json_str(xc_version_string());
  pr(",\n \"libxc_package\": \"Debian libxc-dev/libxc9 5.2.3-1 (the same libxc.so.9 that Debian's psi4 1.3.2 links)\",\n");
  pr(" \"date\": \"" GEN_DATE "\",\n");
  pr(" \"common_settings\": {\n");
  pr("  \"units\": \"Hartree atomic units\",\n");
  pr("  \"exc_definition\": \"libxc zk: exchange-correlation energy PER PARTICLE; energy density e = rho_total * exc\",\n");
  pr("  \"vrho_definition\": \"d e / d rho (unpolarised: total rho; polarised: [d e/d rho_a, d e/d rho_b] per point)\",\n");
  pr("  \"vsigma_definition\": \"d e / d sigma (unpolarised: sigma = |grad rho|^2; polarised: [d e/d sigma_aa, d e/d sigma_ab, d e/d sigma_bb] per point)\",\n");
  pr("  \"layout\": \"unpolarised arrays have one value per point; polarised vrho has 2 and vsigma 3 values per point, in the point order of the input arrays\",\n");
  pr("  \"thresholds\": \"libxc defaults (listed per functional); points below dens_threshold give zero\",\n");
  printf("  \"unpolarised_points_from\": \"rho and reduced gradient s with sigma = (2 (3 pi^2)^(1/3) rho^(4/3) s)^2\",\n");
  printf("  \"polarised_points_from\": \"rho_a, rho_b, s_a, s_b, c with sigma_ss = (2 (6 pi^2)^(1/3) rho_s^(4/3) s_s)^2, sigma_ab = c sqrt(sigma_aa sigma_bb)\"\n");
  pr(" },\n");

  pr(" \"unpolarised_points\": {\"rho\": ");
  json_arr(rho_u, NUNPOL);
  pr(", \"sigma\": ");
  json_arr(sig_u, NUNPOL);
  pr(", \"s\": [");
  for (size_t i = 0; i < NUNPOL; i++) printf("%s%.17g", i ? ", " : "", UNPOL_RHO_S[i][1]);
  pr("]},\n");
  pr(" \"polarised_points\": {\"rho_a_rho_b\": ");
  json_arr(rho_p, 2 * NPOL);
  pr(", \"sigma_aa_ab_bb\": ");
  json_arr(sig_p, 3 * NPOL);
  pr("},\n");

  pr(" \"functionals\": [\n");
  for (size_t k = 0; k < NFUNCS; k++) {
    xc_func_type fu, fp;
    if (xc_func_init(&fu, FUNCS[k].id, XC_UNPOLARIZED) != 0 ||
        xc_func_init(&fp, FUNCS[k].id, XC_POLARIZED) != 0) {
      fprintf(stderr, "cannot init %d\n", FUNCS[k].id);
      return 1;
    }
    int gga = fu.info->family == XC_FAMILY_GGA;
    double exc[NPOL > NUNPOL ? NPOL : NUNPOL], vrho[2 * NPOL], vsig[3 * NPOL];
    printf("  {\"key\": \"%s\", ", FUNCS[k].key);
    print_info(&fu, FUNCS[k].id);
    pr(",\n   \"unpolarised\": {");
    if (gga) xc_gga_exc_vxc(&fu, NUNPOL, rho_u, sig_u, exc, vrho, vsig);
    else xc_lda_exc_vxc(&fu, NUNPOL, rho_u, exc, vrho);
    pr("\"exc\": ");
    json_arr(exc, NUNPOL);
    pr(", \"vrho\": ");
    json_arr(vrho, NUNPOL);
    if (gga) { pr(", \"vsigma\": "); json_arr(vsig, NUNPOL); }
    pr("},\n   \"polarised\": {");
    if (gga) xc_gga_exc_vxc(&fp, NPOL, rho_p, sig_p, exc, vrho, vsig);
    else xc_lda_exc_vxc(&fp, NPOL, rho_p, exc, vrho);
    pr("\"exc\": ");
    json_arr(exc, NPOL);
    pr(", \"vrho\": ");
    json_arr(vrho, 2 * NPOL);
    if (gga) { pr(", \"vsigma\": "); json_arr(vsig, 3 * NPOL); }
    printf("}}%s\n", k + 1 < NFUNCS ? "," : "");
    xc_func_end(&fu);
    xc_func_end(&fp);
  }
  pr(" ],\n");

  pr(" \"hybrid_definitions\": [\n");
  for (size_t k = 0; k < NHYB; k++) {
    xc_func_type f;
    if (xc_func_init(&f, HYBRIDS[k].id, XC_UNPOLARIZED) != 0) return 1;
    printf("  {\"key\": \"%s\", ", HYBRIDS[k].key);
    print_info(&f, HYBRIDS[k].id);
    printf(", \"exact_exchange_fraction\": %.17g", xc_hyb_exx_coef(&f));
    pr(", \"components\": [");
    for (int i = 0; i < f.n_func_aux; i++) {
      printf("%s{\"libxc_id\": %d, \"libxc_name\": ", i ? ", " : "", f.func_aux[i]->info->number);
      json_str(xc_functional_get_name(f.func_aux[i]->info->number));
      printf(", \"coefficient\": %.17g}", f.mix_coef[i]);
    }
    printf("]}%s\n", k + 1 < NHYB ? "," : "");
    xc_func_end(&f);
  }
  pr(" ]\n}\n");
  return 0;
}
