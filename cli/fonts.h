/* fonts.h: the font system's process-wide caches, released once a picture
 * is drawn. */
#ifndef KW_CLI_FONTS_H
#define KW_CLI_FONTS_H

/*! kw_figure_release_fonts(): release cairo's and fontconfig's static font
 * caches after drawing, so that leak checkers see nothing held by the font
 * system; every picture writer of the command calls it once it is done. */
void kw_figure_release_fonts(void);

#endif
