/* pngstat: facts about a PNG image for the browser test, with libpng.
 *
 *   pngstat IMAGE.png
 *       prints "WIDTH HEIGHT INK COLOURS": the size in pixels, the share
 *       of pixels that are not near-white (any channel below 230), in
 *       per mille, and the number of distinct colours (counted up to
 *       4096) -- enough to tell a rendered page from a blank one.
 *   pngstat IMAGE.png X Y W H OUT.png
 *       also writes the W x H part at (X, Y) to OUT.png (for looking).
 *   pngstat IMAGE.png fill Y0 Y1
 *       prints how far down the band of rows [Y0, Y1) its ink reaches, in
 *       per cent of the band (0: no ink): for a printed page, how full it
 *       is between the running header and footer.
 *
 * Exit 0, or 1 when the image cannot be read or written.
 */
#include <png.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int crop(const png_image *in, const png_bytep px, long x, long y,
                long w, long h, const char *out)
{
    png_image o;
    png_bytep buf;
    int ok;

    if (x < 0 || y < 0 || w <= 0 || h <= 0 || x + w > (long)in->width ||
        y + h > (long)in->height) {
        fprintf(stderr, "pngstat: crop outside the image\n");
        return 1;
    }
    buf = malloc((size_t)w * (size_t)h * 4);
    if (buf == NULL)
        return 1;
    for (long r = 0; r < h; r++)
        memcpy(buf + (size_t)r * (size_t)w * 4,
               px + ((size_t)(y + r) * in->width + (size_t)x) * 4,
               (size_t)w * 4);
    memset(&o, 0, sizeof o);
    o.version = PNG_IMAGE_VERSION;
    o.width = (png_uint_32)w;
    o.height = (png_uint_32)h;
    o.format = PNG_FORMAT_RGBA;
    ok = png_image_write_to_file(&o, out, 0, buf, 0, NULL);
    free(buf);
    return ok ? 0 : 1;
}

int main(int argc, char **argv)
{
    png_image img;
    png_bytep px;
    size_t n, ink = 0, n_colours = 0;
    static unsigned colours[8192]; /* open addressing; 0 = empty */

    int fill = argc == 5 && strcmp(argv[2], "fill") == 0;
    if (argc != 2 && argc != 7 && !fill) {
        fprintf(stderr, "usage: pngstat IMAGE.png [X Y W H OUT.png | "
                "fill Y0 Y1]\n");
        return 1;
    }
    memset(&img, 0, sizeof img);
    img.version = PNG_IMAGE_VERSION;
    if (!png_image_begin_read_from_file(&img, argv[1])) {
        fprintf(stderr, "pngstat: %s: %s\n", argv[1], img.message);
        return 1;
    }
    img.format = PNG_FORMAT_RGBA;
    n = (size_t)img.width * img.height;
    px = malloc(PNG_IMAGE_SIZE(img));
    if (px == NULL || !png_image_finish_read(&img, NULL, px, 0, NULL)) {
        fprintf(stderr, "pngstat: %s: cannot decode\n", argv[1]);
        return 1;
    }
    for (size_t i = 0; i < n; i++) {
        const png_byte *p = px + 4 * i;
        /* +1 so that black is not the empty slot */
        unsigned c = ((unsigned)p[0] << 16 | (unsigned)p[1] << 8 | p[2]) + 1;
        size_t k = (c * 2654435761u) >> 19 & 8191;
        if (p[0] < 230 || p[1] < 230 || p[2] < 230)
            ink++;
        while (colours[k] != 0 && colours[k] != c)
            k = (k + 1) & 8191;
        if (colours[k] == 0 && n_colours < 4096) {
            colours[k] = c;
            n_colours++;
        }
    }
    if (fill) {
        long y0 = atol(argv[3]), y1 = atol(argv[4]), last = y0 - 1;
        if (y0 < 0 || y1 <= y0 || y1 > (long)img.height) {
            fprintf(stderr, "pngstat: band outside the image\n");
            return 1;
        }
        for (long y = y0; y < y1; y++)
            for (size_t x = 0; x < img.width; x++) {
                const png_byte *p = px + 4 * ((size_t)y * img.width + x);
                if (p[0] < 230 || p[1] < 230 || p[2] < 230) {
                    last = y;
                    break;
                }
            }
        printf("%ld\n", (last - y0 + 1) * 100 / (y1 - y0));
        free(px);
        return 0;
    }
    printf("%u %u %zu %zu\n", (unsigned)img.width, (unsigned)img.height,
           n ? ink * 1000 / n : 0, n_colours);
    if (argc == 7 &&
        crop(&img, px, atol(argv[2]), atol(argv[3]), atol(argv[4]),
             atol(argv[5]), argv[6]) != 0)
        return 1;
    free(px);
    return 0;
}
