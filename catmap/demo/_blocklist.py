"""A blocklist of famous real brand, retailer and company names, kept as salted digests.

The demo world must never use a real well-known name. The list is stored as truncated SHA-256
digests of the normalised names so that the repository itself does not spell those names out;
:func:`is_blocked` checks a candidate name, each of its words and each pair of adjacent words.
"""

from __future__ import annotations

import hashlib
import re

_SALT = "catmap-demo-blocklist:"

BLOCKED_DIGESTS: frozenset[str] = frozenset(
    {
        "009e2824b11c93f1", "01c64849b0a3362d", "0257ad5df1b6f31e", "032f042b02b0be77",
        "0341b8fec7b94778", "034562e8b9f12987", "0549bf49f5f1c93b", "05934159f5373cb4",
        "0640dbfca485a6d3", "06aaa85ac2f097f2", "07067bc00b5dcd65", "07d51e27dba3e595",
        "07e19ba608a6c0b3", "0822478a5ddec1de", "086bb6609cf0e8a2", "098c6d40ba80ae6c",
        "09cc4766ae6bfc8b", "09d6d06dd857a9fe", "0ca3eebf4db51db3", "0d4a8f26224cb497",
        "0e93e8522ce42901", "0e9831f4f2a7eeed", "0f6dcdafac3382dc", "101aa8ae9f695c16",
        "107c24ad3baf5dff", "10e81fe15a6a236e", "10ffac777a697619", "1116cf87a4ff64cf",
        "112cec1012918352", "115d404e7dd24530", "11c3b7d7240e8ef5", "12657af007b72311",
        "129fd3b8a7d1a4d4", "14905666105a416f", "15b10403b1243353", "15f26421d8cb4422",
        "161bb18dac43ccc6", "1688c8a52cd3bfcc", "17982642bc828cb1", "17f9403171ad8758",
        "193af9026f6a51e3", "1aa4f984d7b06c5a", "1d101eb9996ddaea", "1d3539eedbcf72a9",
        "1f640f8b9ebbc427", "2076bd9635851aa4", "2107cf21a718bf2c", "2228cc185fed8b72",
        "24f4cc79b9336e30", "26b2e65b8954b195", "28337f8e874a5928", "293a393ec08d7313",
        "2978f7dd3486149e", "29d8dd5ce4f4e970", "2a0dde5077b05067", "2a3081facdd16ea1",
        "2c4b59bd9dc139ba", "2c4e8014a0a44edd", "2ca43b91e4d35802", "2d44d71563480c3a",
        "2d6a0b598052787f", "2d855ee439fdf760", "2da64c020d7efbde", "2eddd80d48f6e6dc",
        "2eec75c379bc6b5e", "2ef794e907251289", "2f76570d21802bcf", "3077c5f58d9e5680",
        "31ec1fcce35e66d1", "32d03d76c1844e77", "33184220a8b61f84", "34fad761580f6636",
        "3611f56bb3b300c6", "36d43bcfe3a26891", "3721439eeb3c730a", "373af3f06201641d",
        "37bb23619b3410a0", "38daa231894cfb30", "399ae8c7bc253ab2", "3a000cd7f6811f46",
        "3b34619e5a713525", "3b7731b2657ab9c2", "3b91f7593f6f8f35", "3c445619939d83a6",
        "3d9532a2b1d693b4", "3f27cef1433c09b4", "402fb1ce76dfb5d3", "410c1e9b82a4668c",
        "4134690bdd3d9b30", "4363ad16ddcd02d3", "437bc859c79dd834", "43810721ef3a7f13",
        "44a61e7e830b12ab", "466c84c9ba8fc434", "46ec75eae95086a6", "4726f3347e3e67b8",
        "49a9b70366c50226", "49eb3996a5086f48", "49ecf4b7849fec96", "4c887914f577ac5a",
        "4d5290fe9041ba60", "4e43131b9b51cb7f", "4e516db3c0e99db8", "4ee7448ae7e5d234",
        "4fbca474008f67e6", "4fbf2421e3e9772b", "5247eb7f1b02b052", "526faefb86218658",
        "528eaaeff9bb8167", "5396dab36734452f", "53c1c330d5dbe772", "5466496b835d35e8",
        "546d2ed27032abd0", "54ea1f1739e490b8", "555c89a6c34db41d", "563991b2fce1204d",
        "571d94d522c134ef", "577371fd39267c5f", "5852efa6ecf9d8ca", "59351f27ccc2f972",
        "59d1529057bbc7a4", "5a1a33e6efbc7416", "5a7013a5e3912ec3", "5b4826259b9e4e21",
        "5c69cfb483faf612", "5def9272dc1f34ed", "5e0a0897c3f842ad", "5e51cb9854d3b176",
        "5fce933c96ae7d31", "6026b4dd5f06aaa6", "6116cc2e3fea89ea", "61cadc6a2407342b",
        "63ba6c46f9350ce1", "644af5eeb3df58e4", "6476e9d6f8caf61a", "65c7bb28c937de0d",
        "66509281e14cf216", "66af7549569612d5", "66f4827973892f30", "671d18abf6bb8aa7",
        "6895b981d4d7b824", "6937fe33e8cb3adc", "69417266ee2f4d11", "69fddeebfe02b55c",
        "6a2655c417f3b0fb", "6ad5021e236dd817", "6aed0ecfa1970768", "6b7f0d7d7954cbed",
        "6bce715254172150", "6c12be4256953b31", "6d9227ded4474f19", "6e08dddc7c9ddcc4",
        "6e1c4e63a805f643", "6e3fc2da4cf0afc2", "6e9730dd89e25b31", "6fc379354de782f1",
        "6fc8e5e5711099ce", "7186cb43b4394c87", "738f91bfd3087588", "75e2819cfc812712",
        "765e597389c0015f", "76ad26274e23890b", "770eb4f5917a2220", "77e21090aed2a66f",
        "7a558f707ce2a818", "7b9551990eb7b0e6", "7dd93dc8848b5096", "7e145c4182175922",
        "7eaba1651ea2bfdd", "7ebab1c42c066101", "803288d5fe0906c2", "823d71cb279ec547",
        "82652f5f6798de89", "8322f346d5bd5d9f", "8391dddf4523ea80", "847f2c1793142c06",
        "87045c85dc58d4ab", "873b1a25383da900", "8995c94fe73d1113", "89b5197c6952e724",
        "89d234c075a12cab", "8aa3dc5d01b95f30", "8b2adb5687a0e32f", "8bf0fd60124c9b11",
        "8c2dddeccb0c488e", "8cf12b6577267515", "8e0da0cf936bc292", "8e4aac85d350667a",
        "9160ea52da4b12f3", "91903d95daa293bd", "920dc78b051a26e7", "922880f48bbe5a63",
        "92f03140ebf5356e", "9480699ca8c5b5e1", "94ab7c2e1fed3c7a", "956656cb27eb2d35",
        "96231cabd06ac474", "98ef05a632f0c745", "99537d67d175a3eb", "9acabba0ec389fe4",
        "9b31211ed1819165", "9d00018446fdcdf9", "9d1c3f265655eead", "9d4799fb65b0f801",
        "9e057a83f2396ffb", "9e201a3f03261fe6", "9f03d160a6f31a04", "9f12fe9bc1e79a8b",
        "a05b864e605fab61", "a1160951daf1007f", "a39348ad47b0a4fe", "a3c416704f5a9d4d",
        "a42ebc6434ad2126", "a4e516f8cedebbe2", "a52302e89146bcab", "a562042221d609af",
        "a67637af5a07be8f", "a80a40eae366f927", "a8e946a9a8d91ca6", "a8f9cf4c24fde131",
        "aac5e5ad8f82c259", "ab275404660bd463", "aba7528a7c45173e", "acee411fab2c5ceb",
        "ae3cb404d96d53c0", "aebd7af975d89bce", "aec42b79f25084e9", "b29629aa7e41df35",
        "b2d19f9e5e114bd5", "b35776aa15042fcf", "b371f7eeec664e69", "b3a62093e9c8ce73",
        "b3ba6f94a0bc7452", "b44d85674784bed1", "b63325e52b5c89ba", "b6830cb0326b4c7e",
        "b71c7d010e9bef1b", "b7eafeb615abcaa0", "b7eed60fe1ff07f5", "b809db29a88bcebf",
        "b83fa4a3f8224d2a", "b87042e6a5fc2501", "b8b45b645411f0a5", "b8fe6a77a02cace9",
        "ba301687eb2d553f", "baa26e2e9dda65bb", "bb10c91fbb083bef", "bbc64c5c2f27bdcb",
        "bcf6696e60b329a9", "beb092b098b058c9", "bed265f91d177d8e", "bf70b8cabecb90f4",
        "c304c1ec4a455fe6", "c35b5381cd275094", "c3c777926567b9b9", "c484a2c701c182b0",
        "c53df60eab50c56f", "c6556dc277d3efce", "c79470159d81ca96", "c820e95d5681bb36",
        "ca1b9815fe0bc057", "ca87be1d115ef5b4", "cc12faaf3471c8b4", "cc21b8439ea22c59",
        "cc60b459c29c0050", "cd68cf384125dce6", "cda83e8c719bc303", "ce4dfe4adf808a2d",
        "cf70e8c245175b48", "cfd9aad147d986f7", "d07b550543e7ba27", "d1024c9ecfabe7e1",
        "d1b7eef062cd53f5", "d29894a4b038eb3f", "d3406c52176f0aa7", "d39132f25e88f4d3",
        "d7d01f71408e8153", "d7dc7069e616d252", "d8edc092ab4427f1", "d99a045517563f00",
        "d9af697cc23e8969", "da017bdd9d4b5170", "da91d04c8daa5bf6", "dacf5ba1aceecae4",
        "db93d24265dda963", "db9a22841459572d", "dc5b6a9a90a6196e", "de29227ce8c32b0f",
        "dea4f00c30b1672c", "decff316d517f6fa", "ded616251ce0b3f5", "df4ba7a126051b1c",
        "df7bee0d121e0e61", "e2f613c30561b081", "e3f3cf1dbbdcb43b", "e4bc4d6462b0fc2c",
        "e4f41c82e865a8cc", "e525917039d092de", "e61965ada2d87da3", "e6802d4398390972",
        "e6dbdfdb9a6fc00d", "e7418ed48fb21995", "e80c306aa8b4279b", "e87656149b9df5bf",
        "e8d33ec858b28e05", "e9654f0d2ef70bba", "e97ec13f1f8c119b", "e9b6a52e89621f3c",
        "ea715055b28c10f9", "eb17932179fb5788", "eb1b88b4259b4fc1", "eb9e479117c3289c",
        "ec34e8a2a482df76", "ed179d12415df235", "ed92f8842dd38fdc", "ee29798ca4b30737",
        "ef4be23f194ecd24", "eff56bd26f8854af", "f01dd54ad19e1d3f", "f0448aa7eafd3238",
        "f3c5c813f8b9f3e8", "f5bd24b77006c094", "f5ed4ce6c1526c92", "f68aa520a49804b8",
        "f93dd411b76abdd6", "f9cf64dbef92557f", "fa7b0e299dcceb37", "fb24324e81e39425",
        "fcd20eb5fbdc14bb", "fea3915a33c626da",
    }
)


def _digest(text: str) -> str:
    key = re.sub(r"[^a-z0-9]", "", text.lower())
    return hashlib.sha256((_SALT + key).encode("utf-8")).hexdigest()[:16]


def is_blocked(name: str) -> bool:
    """Return True when a name, one of its words or two adjacent words is a blocked real name.

    Args:
        name: a candidate brand or retailer name, e.g. "Copper Vale & Co".

    Returns:
        True if the whole name (letters and digits only, lower case), any single word, or any
        two adjacent words joined together matches the blocklist.
    """
    words = [w for w in re.split(r"[^0-9A-Za-z\u00c0-\u024f]+", name) if w]
    keys = [name, *words, *(a + b for a, b in zip(words, words[1:], strict=False))]
    return any(_digest(k) in BLOCKED_DIGESTS for k in keys if re.sub(r"[^a-z0-9]", "", k.lower()))
