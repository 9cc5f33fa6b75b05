// Package probe asks of a faint feature in an interferometric image — most
// often at the centre of a lens, where a fifth, demagnified image would form
// — whether it is a real lensed image or an artifact, and answers in the
// visibility plane with numbers:
//
//   - the direct test fits a point source at the position, on top of the
//     best-fit model with its emission near the position removed, to the
//     visibilities; at a fixed position the flux is linear in the data and
//     its error exact from the weights;
//   - the model test fits a lens family that cannot make a central image and
//     one that can, and compares them by Δχ², ΔBIC and the Laplace
//     approximation of the Bayes factor;
//   - the prediction gives the central image each model predicts;
//   - null simulations of the best model without a central image, imaged as
//     the user imaged the data, give the false-alarm probability of the
//     observed peak and the dirty-beam sidelobe level there;
//   - split tests repeat the direct test on subsets of the data.
//
// Fluxes are in Jy inside the package (mJy in the reports, as in model
// files), positions in arcsec (x east, y north), and visibilities follow
// ../shared/conventions.md: V = Σ A S exp(−2πi(u l + v m)), weights 1/σ² per
// real and per imaginary part.
package probe
