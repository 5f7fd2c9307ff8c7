/* Single-tile reference of Winograd minimal filtering F(2,3) and F(2x2,3x3).
 *
 * Written with the transform matrices as matrices (Lavin & Gray, "Fast
 * Algorithms for Convolutional Neural Networks", CVPR 2016, section 4.1):
 *   B^T = [1 0 -1 0; 0 1 1 0; 0 -1 1 0; 0 1 0 -1]
 *   G   = [1 0 0; 1/2 1/2 1/2; 1/2 -1/2 1/2; 0 0 1]
 *   A^T = [1 1 1 0; 0 1 -1 -1]
 * 1-D:  y = A^T [(G g) .* (B^T d)]
 * 2-D:  Y = A^T [(G g G^T) .* (B^T d B)] A
 * Both compute cross-correlation (y_i = sum_k d_{i+k} g_k).  The fast layer
 * code (winograd_2x2_3x3.c) hard-codes the same matrices as additions; this
 * file exists so that tests can check the arithmetic one tile at a time and
 * count the general multiplications of the element-wise stage. */
#ifndef CPT_WINOGRAD_TILE_H
#define CPT_WINOGRAD_TILE_H

/* U = G g G^T for a 3x3 filter g (row-major); U is 4x4 row-major. */
void cpt_wino_filter_tx(const float g[9], float u[16]);
/* V = B^T d B for a 4x4 input tile d (row-major). */
void cpt_wino_input_tx(const float d[16], float v[16]);
/* Y = A^T m A for a 4x4 element-wise product m; Y is 2x2 row-major. */
void cpt_wino_output_tx(const float m[16], float y[4]);

/* F(2x2,3x3) on one tile: y (2x2) from d (4x4) and g (3x3).  When mults is
 * not NULL it is increased by the number of general multiplications of the
 * element-wise stage (the transforms' multiplications by constants are not
 * counted, as in Lavin & Gray 2016). */
void cpt_wino_f2x2_3x3_tile(const float d[16], const float g[9], float y[4], long *mults);
/* F(2,3) on one row: y (2) from d (4) and g (3); mults as above. */
void cpt_wino_f2_3(const float d[4], const float g[3], float y[2], long *mults);

/* F(4x4,3x3) on one tile, from the matrices of Lavin & Gray 2016 (section
 * 4.2, interpolation points 0, 1, -1, 2, -2, infinity): y (4x4) from d (6x6)
 * and g (3x3), all row-major; mults as above. */
void cpt_wino_f4x4_3x3_tile(const float d[36], const float g[9], float y[16], long *mults);

#endif
