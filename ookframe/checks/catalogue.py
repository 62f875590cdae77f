"""Named CRC models with their published check and residue values, and name/alias lookup.

Parameters and check values (CRC over the nine ASCII bytes ``b"123456789"``) are
transcribed from memory of Greg Cook's "Catalogue of parametrised CRC algorithms"
(CRC RevEng); tests/test_checks.py verifies every row independently against the
crccheck library. Residues (the register after an error-free codeword, refout
reflection applied, xorout not applied) are the catalogue's ``residue=`` values, read
from a copy of its entry lines; the tests also compute each one. Names and aliases
follow that catalogue; lookup is case-insensitive.
"""

from __future__ import annotations

from types import MappingProxyType
from typing import NamedTuple

from ..errors import SpecError
from ..spec.model import CrcParams


class CatalogueEntry(NamedTuple):
    """A catalogue model: its Rocksoft parameters, its check value over b"123456789" and
    its residue (register after any error-free codeword, before xorout)."""

    params: CrcParams
    check: int
    residue: int


_F, _T = False, True
_M32 = 0xFFFFFFFF
_M64 = 0xFFFFFFFFFFFFFFFF

# name, width, poly, init, refin, refout, xorout, check, residue, aliases
_ROWS: tuple[tuple[str, int, int, int, bool, bool, int, int, int, tuple[str, ...]], ...] = (
    ("CRC-3/GSM", 3, 0x3, 0x0, _F, _F, 0x7, 0x4, 0x2, ()),
    ("CRC-3/ROHC", 3, 0x3, 0x7, _T, _T, 0x0, 0x6, 0x0, ()),
    ("CRC-4/G-704", 4, 0x3, 0x0, _T, _T, 0x0, 0x7, 0x0, ("CRC-4/ITU",)),
    ("CRC-4/INTERLAKEN", 4, 0x3, 0xF, _F, _F, 0xF, 0xB, 0x2, ()),
    ("CRC-5/EPC-C1G2", 5, 0x09, 0x09, _F, _F, 0x00, 0x00, 0x00, ("CRC-5/EPC",)),
    ("CRC-5/G-704", 5, 0x15, 0x00, _T, _T, 0x00, 0x07, 0x00, ("CRC-5/ITU",)),
    ("CRC-5/USB", 5, 0x05, 0x1F, _T, _T, 0x1F, 0x19, 0x06, ()),
    ("CRC-6/CDMA2000-A", 6, 0x27, 0x3F, _F, _F, 0x00, 0x0D, 0x00, ()),
    ("CRC-6/CDMA2000-B", 6, 0x07, 0x3F, _F, _F, 0x00, 0x3B, 0x00, ()),
    ("CRC-6/DARC", 6, 0x19, 0x00, _T, _T, 0x00, 0x26, 0x00, ()),
    ("CRC-6/G-704", 6, 0x03, 0x00, _T, _T, 0x00, 0x06, 0x00, ("CRC-6/ITU",)),
    ("CRC-6/GSM", 6, 0x2F, 0x00, _F, _F, 0x3F, 0x13, 0x3A, ()),
    ("CRC-7/MMC", 7, 0x09, 0x00, _F, _F, 0x00, 0x75, 0x00, ("CRC-7",)),
    ("CRC-7/ROHC", 7, 0x4F, 0x7F, _T, _T, 0x00, 0x53, 0x00, ()),
    ("CRC-7/UMTS", 7, 0x45, 0x00, _F, _F, 0x00, 0x61, 0x00, ()),
    ("CRC-8/AUTOSAR", 8, 0x2F, 0xFF, _F, _F, 0xFF, 0xDF, 0x42, ()),
    ("CRC-8/BLUETOOTH", 8, 0xA7, 0x00, _T, _T, 0x00, 0x26, 0x00, ()),
    ("CRC-8/CDMA2000", 8, 0x9B, 0xFF, _F, _F, 0x00, 0xDA, 0x00, ()),
    ("CRC-8/DARC", 8, 0x39, 0x00, _T, _T, 0x00, 0x15, 0x00, ()),
    ("CRC-8/DVB-S2", 8, 0xD5, 0x00, _F, _F, 0x00, 0xBC, 0x00, ()),
    ("CRC-8/GSM-A", 8, 0x1D, 0x00, _F, _F, 0x00, 0x37, 0x00, ()),
    ("CRC-8/GSM-B", 8, 0x49, 0x00, _F, _F, 0xFF, 0x94, 0x53, ()),
    ("CRC-8/HITAG", 8, 0x1D, 0xFF, _F, _F, 0x00, 0xB4, 0x00, ()),
    ("CRC-8/I-432-1", 8, 0x07, 0x00, _F, _F, 0x55, 0xA1, 0xAC, ("CRC-8/ITU",)),
    ("CRC-8/I-CODE", 8, 0x1D, 0xFD, _F, _F, 0x00, 0x7E, 0x00, ()),
    ("CRC-8/LTE", 8, 0x9B, 0x00, _F, _F, 0x00, 0xEA, 0x00, ()),
    ("CRC-8/MAXIM-DOW", 8, 0x31, 0x00, _T, _T, 0x00, 0xA1, 0x00, ("CRC-8/MAXIM", "DOW-CRC")),
    ("CRC-8/MIFARE-MAD", 8, 0x1D, 0xC7, _F, _F, 0x00, 0x99, 0x00, ()),
    ("CRC-8/NRSC-5", 8, 0x31, 0xFF, _F, _F, 0x00, 0xF7, 0x00, ()),
    ("CRC-8/OPENSAFETY", 8, 0x2F, 0x00, _F, _F, 0x00, 0x3E, 0x00, ()),
    ("CRC-8/ROHC", 8, 0x07, 0xFF, _T, _T, 0x00, 0xD0, 0x00, ()),
    ("CRC-8/SAE-J1850", 8, 0x1D, 0xFF, _F, _F, 0xFF, 0x4B, 0xC4, ()),
    ("CRC-8/SMBUS", 8, 0x07, 0x00, _F, _F, 0x00, 0xF4, 0x00, ("CRC-8",)),
    ("CRC-8/TECH-3250", 8, 0x1D, 0xFF, _T, _T, 0x00, 0x97, 0x00, ("CRC-8/AES", "CRC-8/EBU")),
    ("CRC-8/WCDMA", 8, 0x9B, 0x00, _T, _T, 0x00, 0x25, 0x00, ()),
    ("CRC-10/ATM", 10, 0x233, 0x000, _F, _F, 0x000, 0x199, 0x000, ("CRC-10", "CRC-10/I-610")),
    ("CRC-10/CDMA2000", 10, 0x3D9, 0x3FF, _F, _F, 0x000, 0x233, 0x000, ()),
    ("CRC-10/GSM", 10, 0x175, 0x000, _F, _F, 0x3FF, 0x12A, 0x0C6, ()),
    ("CRC-11/FLEXRAY", 11, 0x385, 0x01A, _F, _F, 0x000, 0x5A3, 0x000, ("CRC-11",)),
    ("CRC-11/UMTS", 11, 0x307, 0x000, _F, _F, 0x000, 0x061, 0x000, ()),
    ("CRC-12/CDMA2000", 12, 0xF13, 0xFFF, _F, _F, 0x000, 0xD4D, 0x000, ()),
    ("CRC-12/DECT", 12, 0x80F, 0x000, _F, _F, 0x000, 0xF5B, 0x000, ("X-CRC-12",)),
    ("CRC-12/GSM", 12, 0xD31, 0x000, _F, _F, 0xFFF, 0xB34, 0x178, ()),
    # refin and refout differ in this published model
    ("CRC-12/UMTS", 12, 0x80F, 0x000, _F, _T, 0x000, 0xDAF, 0x000, ("CRC-12/3GPP",)),
    ("CRC-13/BBC", 13, 0x1CF5, 0x0000, _F, _F, 0x0000, 0x04FA, 0x0000, ()),
    ("CRC-14/DARC", 14, 0x0805, 0x0000, _T, _T, 0x0000, 0x082D, 0x0000, ()),
    ("CRC-14/GSM", 14, 0x202D, 0x0000, _F, _F, 0x3FFF, 0x30AE, 0x031E, ()),
    ("CRC-15/CAN", 15, 0x4599, 0x0000, _F, _F, 0x0000, 0x059E, 0x0000, ("CRC-15",)),
    ("CRC-15/MPT1327", 15, 0x6815, 0x0000, _F, _F, 0x0001, 0x2566, 0x6815, ()),
    ("CRC-16/ARC", 16, 0x8005, 0x0000, _T, _T, 0x0000, 0xBB3D, 0x0000,
     ("ARC", "CRC-16", "CRC-16/LHA", "CRC-IBM")),
    ("CRC-16/CDMA2000", 16, 0xC867, 0xFFFF, _F, _F, 0x0000, 0x4C06, 0x0000, ()),
    ("CRC-16/CMS", 16, 0x8005, 0xFFFF, _F, _F, 0x0000, 0xAEE7, 0x0000, ()),
    ("CRC-16/DDS-110", 16, 0x8005, 0x800D, _F, _F, 0x0000, 0x9ECF, 0x0000, ()),
    ("CRC-16/DECT-R", 16, 0x0589, 0x0000, _F, _F, 0x0001, 0x007E, 0x0589, ("R-CRC-16",)),
    ("CRC-16/DECT-X", 16, 0x0589, 0x0000, _F, _F, 0x0000, 0x007F, 0x0000, ("X-CRC-16",)),
    ("CRC-16/DNP", 16, 0x3D65, 0x0000, _T, _T, 0xFFFF, 0xEA82, 0x66C5, ()),
    ("CRC-16/EN-13757", 16, 0x3D65, 0x0000, _F, _F, 0xFFFF, 0xC2B7, 0xA366, ()),
    ("CRC-16/GENIBUS", 16, 0x1021, 0xFFFF, _F, _F, 0xFFFF, 0xD64E, 0x1D0F,
     ("CRC-16/DARC", "CRC-16/EPC", "CRC-16/EPC-C1G2", "CRC-16/I-CODE")),
    ("CRC-16/GSM", 16, 0x1021, 0x0000, _F, _F, 0xFFFF, 0xCE3C, 0x1D0F, ()),
    ("CRC-16/IBM-3740", 16, 0x1021, 0xFFFF, _F, _F, 0x0000, 0x29B1, 0x0000,
     ("CRC-16/AUTOSAR", "CRC-16/CCITT-FALSE")),
    ("CRC-16/IBM-SDLC", 16, 0x1021, 0xFFFF, _T, _T, 0xFFFF, 0x906E, 0xF0B8,
     ("CRC-16/ISO-HDLC", "CRC-16/ISO-IEC-14443-3-B", "CRC-16/X-25", "CRC-B", "X-25")),
    ("CRC-16/ISO-IEC-14443-3-A", 16, 0x1021, 0xC6C6, _T, _T, 0x0000, 0xBF05, 0x0000, ("CRC-A",)),
    ("CRC-16/KERMIT", 16, 0x1021, 0x0000, _T, _T, 0x0000, 0x2189, 0x0000,
     ("CRC-16/BLUETOOTH", "CRC-16/CCITT", "CRC-16/CCITT-TRUE", "CRC-16/V-41-LSB",
      "CRC-CCITT", "KERMIT")),
    ("CRC-16/LJ1200", 16, 0x6F63, 0x0000, _F, _F, 0x0000, 0xBDF4, 0x0000, ()),
    ("CRC-16/M17", 16, 0x5935, 0xFFFF, _F, _F, 0x0000, 0x772B, 0x0000, ()),
    ("CRC-16/MAXIM-DOW", 16, 0x8005, 0x0000, _T, _T, 0xFFFF, 0x44C2, 0xB001, ("CRC-16/MAXIM",)),
    ("CRC-16/MCRF4XX", 16, 0x1021, 0xFFFF, _T, _T, 0x0000, 0x6F91, 0x0000, ()),
    ("CRC-16/MODBUS", 16, 0x8005, 0xFFFF, _T, _T, 0x0000, 0x4B37, 0x0000, ("MODBUS",)),
    ("CRC-16/NRSC-5", 16, 0x080B, 0xFFFF, _T, _T, 0x0000, 0xA066, 0x0000, ()),
    ("CRC-16/OPENSAFETY-A", 16, 0x5935, 0x0000, _F, _F, 0x0000, 0x5D38, 0x0000, ()),
    ("CRC-16/OPENSAFETY-B", 16, 0x755B, 0x0000, _F, _F, 0x0000, 0x20FE, 0x0000, ()),
    ("CRC-16/PROFIBUS", 16, 0x1DCF, 0xFFFF, _F, _F, 0xFFFF, 0xA819, 0xE394, ("CRC-16/IEC-61158-2",)),
    ("CRC-16/RIELLO", 16, 0x1021, 0xB2AA, _T, _T, 0x0000, 0x63D0, 0x0000, ()),
    ("CRC-16/SPI-FUJITSU", 16, 0x1021, 0x1D0F, _F, _F, 0x0000, 0xE5CC, 0x0000, ("CRC-16/AUG-CCITT",)),
    ("CRC-16/T10-DIF", 16, 0x8BB7, 0x0000, _F, _F, 0x0000, 0xD0DB, 0x0000, ()),
    ("CRC-16/TELEDISK", 16, 0xA097, 0x0000, _F, _F, 0x0000, 0x0FB3, 0x0000, ()),
    ("CRC-16/TMS37157", 16, 0x1021, 0x89EC, _T, _T, 0x0000, 0x26B1, 0x0000, ()),
    ("CRC-16/UMTS", 16, 0x8005, 0x0000, _F, _F, 0x0000, 0xFEE8, 0x0000,
     ("CRC-16/BUYPASS", "CRC-16/VERIFONE")),
    ("CRC-16/USB", 16, 0x8005, 0xFFFF, _T, _T, 0xFFFF, 0xB4C8, 0xB001, ()),
    ("CRC-16/XMODEM", 16, 0x1021, 0x0000, _F, _F, 0x0000, 0x31C3, 0x0000,
     ("CRC-16/ACORN", "CRC-16/LTE", "CRC-16/V-41-MSB", "XMODEM", "ZMODEM")),
    ("CRC-17/CAN-FD", 17, 0x1685B, 0x00000, _F, _F, 0x00000, 0x04F03, 0x00000, ()),
    ("CRC-21/CAN-FD", 21, 0x102899, 0x000000, _F, _F, 0x000000, 0x0ED841, 0x000000, ()),
    ("CRC-24/BLE", 24, 0x00065B, 0x555555, _T, _T, 0x000000, 0xC25A56, 0x000000, ()),
    ("CRC-24/FLEXRAY-A", 24, 0x5D6DCB, 0xFEDCBA, _F, _F, 0x000000, 0x7979BD, 0x000000, ()),
    ("CRC-24/FLEXRAY-B", 24, 0x5D6DCB, 0xABCDEF, _F, _F, 0x000000, 0x1F23B8, 0x000000, ()),
    ("CRC-24/INTERLAKEN", 24, 0x328B63, 0xFFFFFF, _F, _F, 0xFFFFFF, 0xB4F3E6, 0x144E63, ()),
    ("CRC-24/LTE-A", 24, 0x864CFB, 0x000000, _F, _F, 0x000000, 0xCDE703, 0x000000, ()),
    ("CRC-24/LTE-B", 24, 0x800063, 0x000000, _F, _F, 0x000000, 0x23EF52, 0x000000, ()),
    ("CRC-24/OPENPGP", 24, 0x864CFB, 0xB704CE, _F, _F, 0x000000, 0x21CF02, 0x000000, ("CRC-24",)),
    ("CRC-24/OS-9", 24, 0x800063, 0xFFFFFF, _F, _F, 0xFFFFFF, 0x200FA5, 0x800FE3, ()),
    ("CRC-30/CDMA", 30, 0x2030B9C7, 0x3FFFFFFF, _F, _F, 0x3FFFFFFF, 0x04C34ABF, 0x34EFA55A, ()),
    ("CRC-31/PHILIPS", 31, 0x04C11DB7, 0x7FFFFFFF, _F, _F, 0x7FFFFFFF, 0x0CE9E46C, 0x4EAF26F1, ()),
    ("CRC-32/AIXM", 32, 0x814141AB, 0, _F, _F, 0, 0x3010BF7F, 0x00000000, ("CRC-32Q",)),
    ("CRC-32/AUTOSAR", 32, 0xF4ACFB13, _M32, _T, _T, _M32, 0x1697D06A, 0x904CDDBF, ()),
    ("CRC-32/BASE91-D", 32, 0xA833982B, _M32, _T, _T, _M32, 0x87315576, 0x45270551, ("CRC-32D",)),
    ("CRC-32/BZIP2", 32, 0x04C11DB7, _M32, _F, _F, _M32, 0xFC891918, 0xC704DD7B,
     ("B-CRC-32", "CRC-32/AAL5", "CRC-32/DECT-B")),
    ("CRC-32/CD-ROM-EDC", 32, 0x8001801B, 0, _T, _T, 0, 0x6EC2EDC4, 0x00000000, ()),
    ("CRC-32/CKSUM", 32, 0x04C11DB7, 0, _F, _F, _M32, 0x765E7680, 0xC704DD7B, ("CKSUM", "CRC-32/POSIX")),
    ("CRC-32/ISCSI", 32, 0x1EDC6F41, _M32, _T, _T, _M32, 0xE3069283, 0xB798B438,
     ("CRC-32/BASE91-C", "CRC-32/CASTAGNOLI", "CRC-32/INTERLAKEN", "CRC-32C")),
    ("CRC-32/ISO-HDLC", 32, 0x04C11DB7, _M32, _T, _T, _M32, 0xCBF43926, 0xDEBB20E3,
     ("CRC-32", "CRC-32/ADCCP", "CRC-32/V-42", "CRC-32/XZ", "PKZIP")),
    ("CRC-32/JAMCRC", 32, 0x04C11DB7, _M32, _T, _T, 0, 0x340BC6D9, 0x00000000, ("JAMCRC",)),
    ("CRC-32/MEF", 32, 0x741B8CD7, _M32, _T, _T, 0, 0xD2C22F51, 0x00000000, ()),
    ("CRC-32/MPEG-2", 32, 0x04C11DB7, _M32, _F, _F, 0, 0x0376E6E7, 0x00000000, ()),
    ("CRC-32/XFER", 32, 0x000000AF, 0, _F, _F, 0, 0xBD0BE338, 0x00000000, ("XFER",)),
    ("CRC-40/GSM", 40, 0x0004820009, 0, _F, _F, 0xFFFFFFFFFF, 0xD4164FC646, 0xC4FF8071FF, ()),
    ("CRC-64/ECMA-182", 64, 0x42F0E1EBA9EA3693, 0, _F, _F, 0, 0x6C40DF5F0B497347, 0x0000000000000000, ("CRC-64",)),
    ("CRC-64/GO-ISO", 64, 0x000000000000001B, _M64, _T, _T, _M64, 0xB90956C775A41001, 0x5300000000000000, ()),
    ("CRC-64/MS", 64, 0x259C84CBA6426349, _M64, _T, _T, 0, 0x75D4B74F024ECEEA, 0x0000000000000000, ()),
    ("CRC-64/REDIS", 64, 0xAD93D23594C935A9, 0, _T, _T, 0, 0xE9C6D914C4B8D9CA, 0x0000000000000000, ()),
    ("CRC-64/WE", 64, 0x42F0E1EBA9EA3693, _M64, _F, _F, _M64, 0x62EC59E3F1A4F00A, 0xFCACBEBD5931A992, ()),
    ("CRC-64/XZ", 64, 0x42F0E1EBA9EA3693, _M64, _T, _T, _M64, 0x995DC9BBDF1939FA, 0x49958C9ABD7D353F,
     ("CRC-64/GO-ECMA",)),
)


def _build() -> tuple[dict[str, CatalogueEntry], dict[str, str]]:
    models: dict[str, CatalogueEntry] = {}
    aliases: dict[str, str] = {}
    for name, width, poly, init, refin, refout, xorout, check, residue, alias_names in _ROWS:
        params = CrcParams(width=width, poly=poly, init=init, refin=refin, refout=refout,
                           xorout=xorout, name=name)
        for key in (name, *alias_names):
            if key in models or key in aliases:
                raise RuntimeError(f"CRC catalogue lists {key!r} twice")
        models[name] = CatalogueEntry(params, check, residue)
        aliases.update({a: name for a in alias_names})
    return models, aliases


_MODELS, _ALIASES = _build()

#: catalogue name (upper case, e.g. "CRC-16/KERMIT") -> (params, check over b"123456789", residue)
CATALOGUE: MappingProxyType[str, CatalogueEntry] = MappingProxyType(_MODELS)
#: alias (upper case, e.g. "CRC-16/CCITT", "MODBUS") -> catalogue name
ALIASES: MappingProxyType[str, str] = MappingProxyType(_ALIASES)


def resolve_name(name: str) -> str:
    """Return the catalogue name for a model name, alias or unambiguous bare suffix.

    Case-insensitive. "crc-16/kermit", "CRC-CCITT" and "KERMIT" all give "CRC-16/KERMIT";
    a bare suffix such as "DNP" is accepted only when exactly one model (name or alias)
    ends in "/DNP". Raises SpecError (path "model") naming the candidates otherwise.
    """
    key = name.strip().upper()
    if key in _MODELS:
        return key
    if key in _ALIASES:
        return _ALIASES[key]
    candidates = sorted({_ALIASES.get(k, k) for k in (*_MODELS, *_ALIASES)
                         if "/" not in key and k.endswith("/" + key)})
    if len(candidates) == 1:
        return candidates[0]
    if candidates:
        raise SpecError("model", f"ambiguous CRC model {name!r}: could be "
                        f"{', '.join(candidates)}; give the full catalogue name")
    raise SpecError("model", f"unknown CRC model {name!r}; allowed: a catalogue name such as "
                    f"\"CRC-16/KERMIT\" (see ookframe.checks.CATALOGUE) or explicit parameters")
